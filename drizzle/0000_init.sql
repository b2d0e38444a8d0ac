CREATE TABLE `api_tokens` (
	`id` text PRIMARY KEY NOT NULL,
	`user_id` text NOT NULL,
	`name` text NOT NULL,
	`token_hash` text NOT NULL,
	`created_at` text DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ','now')) NOT NULL,
	`last_used_at` text,
	`revoked_at` text,
	FOREIGN KEY (`user_id`) REFERENCES `users`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE UNIQUE INDEX `api_tokens_token_hash_unique` ON `api_tokens` (`token_hash`);--> statement-breakpoint
CREATE TABLE `audit_log` (
	`id` text PRIMARY KEY NOT NULL,
	`created_at` text DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ','now')) NOT NULL,
	`actor_user_id` text,
	`action` text NOT NULL,
	`entity` text NOT NULL,
	`entity_id` text,
	`detail` text
);
--> statement-breakpoint
CREATE INDEX `audit_entity` ON `audit_log` (`entity`,`entity_id`);--> statement-breakpoint
CREATE TABLE `auth_sessions` (
	`id` text PRIMARY KEY NOT NULL,
	`user_id` text NOT NULL,
	`created_at` text DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ','now')) NOT NULL,
	`expires_at` text NOT NULL,
	`last_seen_at` text,
	`revoked_at` text,
	`user_agent` text,
	`ip` text,
	FOREIGN KEY (`user_id`) REFERENCES `users`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE INDEX `auth_sessions_user` ON `auth_sessions` (`user_id`);--> statement-breakpoint
CREATE TABLE `check_sessions` (
	`id` text PRIMARY KEY NOT NULL,
	`sensor_id` text NOT NULL,
	`site_id` text NOT NULL,
	`project_id` text,
	`started_at` text NOT NULL,
	`air_temp_c` real,
	`pressure_hpa` real,
	`humidity_pct` real,
	`note` text,
	`raw` text NOT NULL,
	`device_id` text NOT NULL,
	`synced_by` text,
	`created_at` text DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ','now')) NOT NULL,
	FOREIGN KEY (`sensor_id`) REFERENCES `sensors`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`site_id`) REFERENCES `sites`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`project_id`) REFERENCES `projects`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`synced_by`) REFERENCES `users`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE INDEX `check_sessions_sensor` ON `check_sessions` (`sensor_id`,`started_at`);--> statement-breakpoint
CREATE TABLE `exclusions` (
	`id` text PRIMARY KEY NOT NULL,
	`shot_id` text NOT NULL,
	`reason` text NOT NULL,
	`by_user_id` text NOT NULL,
	`created_at` text DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ','now')) NOT NULL,
	`restored_at` text,
	`restored_by` text,
	`restore_reason` text,
	FOREIGN KEY (`shot_id`) REFERENCES `shots`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`by_user_id`) REFERENCES `users`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`restored_by`) REFERENCES `users`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE INDEX `exclusions_shot` ON `exclusions` (`shot_id`);--> statement-breakpoint
CREATE TABLE `import_mappings` (
	`sensor_id` text PRIMARY KEY NOT NULL,
	`mapping` text NOT NULL,
	`updated_at` text NOT NULL,
	`updated_by` text,
	FOREIGN KEY (`sensor_id`) REFERENCES `sensors`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`updated_by`) REFERENCES `users`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE TABLE `login_codes` (
	`id` text PRIMARY KEY NOT NULL,
	`email` text NOT NULL,
	`code_hash` text NOT NULL,
	`created_at` text DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ','now')) NOT NULL,
	`expires_at` text NOT NULL,
	`attempts` integer DEFAULT 0 NOT NULL,
	`used_at` text,
	`ip` text
);
--> statement-breakpoint
CREATE INDEX `login_codes_email` ON `login_codes` (`email`);--> statement-breakpoint
CREATE TABLE `mail_log` (
	`id` text PRIMARY KEY NOT NULL,
	`created_at` text DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ','now')) NOT NULL,
	`to` text NOT NULL,
	`subject` text NOT NULL,
	`template` text NOT NULL,
	`status` text NOT NULL,
	`attempts` integer DEFAULT 1 NOT NULL,
	`error` text,
	`message_id` text,
	`payload` text
);
--> statement-breakpoint
CREATE TABLE `photos` (
	`id` text PRIMARY KEY NOT NULL,
	`shot_id` text NOT NULL,
	`content_type` text NOT NULL,
	`bytes` integer NOT NULL,
	`sha256` text NOT NULL,
	`path` text NOT NULL,
	`uploaded_by` text,
	`created_at` text DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ','now')) NOT NULL,
	FOREIGN KEY (`shot_id`) REFERENCES `shots`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`uploaded_by`) REFERENCES `users`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE INDEX `photos_shot` ON `photos` (`shot_id`);--> statement-breakpoint
CREATE UNIQUE INDEX `photos_shot_sha` ON `photos` (`shot_id`,`sha256`);--> statement-breakpoint
CREATE TABLE `project_sensors` (
	`project_id` text NOT NULL,
	`sensor_id` text NOT NULL,
	PRIMARY KEY(`project_id`, `sensor_id`),
	FOREIGN KEY (`project_id`) REFERENCES `projects`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`sensor_id`) REFERENCES `sensors`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE TABLE `project_sites` (
	`project_id` text NOT NULL,
	`site_id` text NOT NULL,
	PRIMARY KEY(`project_id`, `site_id`),
	FOREIGN KEY (`project_id`) REFERENCES `projects`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`site_id`) REFERENCES `sites`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE TABLE `projects` (
	`id` text PRIMARY KEY NOT NULL,
	`name` text NOT NULL,
	`client` text DEFAULT '' NOT NULL,
	`min_shots` integer DEFAULT 20 NOT NULL,
	`coverage_k` real DEFAULT 2 NOT NULL,
	`min_within_pct` real DEFAULT 95 NOT NULL,
	`range_band_edges_m` text DEFAULT '[0,10,30,100]' NOT NULL,
	`notes` text DEFAULT '' NOT NULL,
	`created_at` text DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ','now')) NOT NULL,
	`updated_at` text,
	`retired_at` text
);
--> statement-breakpoint
CREATE TABLE `rate_limits` (
	`key` text NOT NULL,
	`window_start` text NOT NULL,
	`count` integer DEFAULT 0 NOT NULL,
	PRIMARY KEY(`key`, `window_start`)
);
--> statement-breakpoint
CREATE TABLE `sensors` (
	`id` text PRIMARY KEY NOT NULL,
	`label` text NOT NULL,
	`serial` text NOT NULL,
	`kind` text NOT NULL,
	`wavelength_nm` real NOT NULL,
	`modulation_hz` text DEFAULT '[]' NOT NULL,
	`applies_air_correction` integer NOT NULL,
	`assumed_refractivity` real DEFAULT 0 NOT NULL,
	`tolerance_mm` real NOT NULL,
	`tolerance_ppm` real NOT NULL,
	`outdoor` integer DEFAULT true NOT NULL,
	`calibration_due` text,
	`notes` text DEFAULT '' NOT NULL,
	`created_at` text DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ','now')) NOT NULL,
	`updated_at` text,
	`retired_at` text
);
--> statement-breakpoint
CREATE TABLE `shots` (
	`id` text PRIMARY KEY NOT NULL,
	`session_id` text NOT NULL,
	`sensor_id` text NOT NULL,
	`taken_at` text NOT NULL,
	`target_id` text,
	`raw` text NOT NULL,
	`reference_method` text NOT NULL,
	`reflectance_pct` real NOT NULL,
	`illuminance_klux` real,
	`incidence_deg` real,
	`lat` real,
	`lon` real,
	`accuracy_m` real,
	`note` text,
	`device_id` text NOT NULL,
	`synced_by` text,
	`created_at` text DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ','now')) NOT NULL,
	`reference_m` real NOT NULL,
	`range_m` real NOT NULL,
	`error_mm` real NOT NULL,
	`tolerance_mm` real NOT NULL,
	`limit_mm` real NOT NULL,
	`within` integer NOT NULL,
	`repeatability_mm` real,
	`readings_count` integer DEFAULT 1 NOT NULL,
	`wrap` integer DEFAULT false NOT NULL,
	`unambiguous_m` real,
	`retro` integer DEFAULT false NOT NULL,
	`air_defaulted` integer DEFAULT false NOT NULL,
	`excluded` integer DEFAULT false NOT NULL,
	`computed_at` text NOT NULL,
	FOREIGN KEY (`session_id`) REFERENCES `check_sessions`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`sensor_id`) REFERENCES `sensors`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`target_id`) REFERENCES `targets`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`synced_by`) REFERENCES `users`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE INDEX `shots_sensor_taken` ON `shots` (`sensor_id`,`taken_at`);--> statement-breakpoint
CREATE INDEX `shots_session` ON `shots` (`session_id`);--> statement-breakpoint
CREATE TABLE `sign_offs` (
	`id` text PRIMARY KEY NOT NULL,
	`sensor_id` text NOT NULL,
	`project_id` text,
	`decision` text NOT NULL,
	`period_from` text,
	`period_to` text,
	`session_ids` text DEFAULT '[]' NOT NULL,
	`verdict` text NOT NULL,
	`bias_mm` real,
	`snapshot` text NOT NULL,
	`note` text DEFAULT '' NOT NULL,
	`by_user_id` text NOT NULL,
	`created_at` text DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ','now')) NOT NULL,
	FOREIGN KEY (`sensor_id`) REFERENCES `sensors`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`project_id`) REFERENCES `projects`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`by_user_id`) REFERENCES `users`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE INDEX `sign_offs_sensor` ON `sign_offs` (`sensor_id`,`created_at`);--> statement-breakpoint
CREATE TABLE `sites` (
	`id` text PRIMARY KEY NOT NULL,
	`name` text NOT NULL,
	`lat` real,
	`lon` real,
	`notes` text DEFAULT '' NOT NULL,
	`created_at` text DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ','now')) NOT NULL,
	`updated_at` text,
	`retired_at` text
);
--> statement-breakpoint
CREATE TABLE `stations` (
	`id` text PRIMARY KEY NOT NULL,
	`site_id` text NOT NULL,
	`label` text NOT NULL,
	`grid_e` real,
	`grid_n` real,
	`grid_h` real,
	`lat` real,
	`lon` real,
	`h` real,
	`retired_at` text,
	FOREIGN KEY (`site_id`) REFERENCES `sites`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE INDEX `stations_site` ON `stations` (`site_id`);--> statement-breakpoint
CREATE TABLE `tapes` (
	`id` text PRIMARY KEY NOT NULL,
	`label` text NOT NULL,
	`standard_temp_c` real NOT NULL,
	`standard_tension_n` real NOT NULL,
	`area_mm2` real NOT NULL,
	`modulus_gpa` real NOT NULL,
	`weight_n_per_m` real NOT NULL,
	`calibration_ppm` real DEFAULT 0 NOT NULL,
	`notes` text DEFAULT '' NOT NULL,
	`created_at` text DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ','now')) NOT NULL,
	`updated_at` text,
	`retired_at` text
);
--> statement-breakpoint
CREATE TABLE `targets` (
	`id` text PRIMARY KEY NOT NULL,
	`site_id` text NOT NULL,
	`label` text NOT NULL,
	`reflectance_pct` real NOT NULL,
	`retro` integer DEFAULT false NOT NULL,
	`reference_m` real,
	`grid_e` real,
	`grid_n` real,
	`grid_h` real,
	`lat` real,
	`lon` real,
	`h` real,
	`retired_at` text,
	FOREIGN KEY (`site_id`) REFERENCES `sites`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE INDEX `targets_site` ON `targets` (`site_id`);--> statement-breakpoint
CREATE TABLE `users` (
	`id` text PRIMARY KEY NOT NULL,
	`email` text NOT NULL,
	`name` text DEFAULT '' NOT NULL,
	`role` text DEFAULT 'viewer' NOT NULL,
	`active` integer DEFAULT true NOT NULL,
	`invited_by` text,
	`created_at` text DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ','now')) NOT NULL,
	`last_sign_in_at` text
);
--> statement-breakpoint
CREATE UNIQUE INDEX `users_email_unique` ON `users` (`email`);