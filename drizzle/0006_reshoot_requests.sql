CREATE TABLE `reshoot_requests` (
	`id` text PRIMARY KEY NOT NULL,
	`sensor_id` text NOT NULL,
	`site_id` text NOT NULL,
	`project_id` text,
	`wanted` text NOT NULL,
	`reason` text NOT NULL,
	`by_user_id` text NOT NULL,
	`created_at` text DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ','now')) NOT NULL,
	`state` text DEFAULT 'open' NOT NULL,
	`closed_at` text,
	`closed_by` text,
	FOREIGN KEY (`sensor_id`) REFERENCES `sensors`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`site_id`) REFERENCES `sites`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`project_id`) REFERENCES `projects`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`by_user_id`) REFERENCES `users`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`closed_by`) REFERENCES `users`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE INDEX `reshoot_requests_sensor` ON `reshoot_requests` (`sensor_id`,`created_at`);--> statement-breakpoint
CREATE INDEX `reshoot_requests_site` ON `reshoot_requests` (`site_id`);