CREATE TABLE `certificate_notices` (
	`kind` text NOT NULL,
	`entity_id` text NOT NULL,
	`number` text NOT NULL,
	`due` text NOT NULL,
	`created_at` text DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ','now')) NOT NULL,
	PRIMARY KEY(`kind`, `entity_id`, `number`, `due`)
);
--> statement-breakpoint
CREATE TABLE `edms` (
	`id` text PRIMARY KEY NOT NULL,
	`label` text NOT NULL,
	`serial` text NOT NULL,
	`uncertainty_mm` real NOT NULL,
	`uncertainty_ppm` real DEFAULT 0 NOT NULL,
	`cert_number` text,
	`cert_laboratory` text,
	`cert_issued` text,
	`cert_due` text,
	`notes` text DEFAULT '' NOT NULL,
	`created_at` text DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ','now')) NOT NULL,
	`updated_at` text,
	`retired_at` text
);
--> statement-breakpoint
ALTER TABLE `projects` ADD `reference_ratio` real DEFAULT 2 NOT NULL;--> statement-breakpoint
ALTER TABLE `projects` ADD `reference_in_verdict` integer DEFAULT false NOT NULL;--> statement-breakpoint
ALTER TABLE `projects` ADD `statement` text DEFAULT 'rmse' NOT NULL;--> statement-breakpoint
ALTER TABLE `projects` ADD `edm_uncertainty_mm` real;--> statement-breakpoint
ALTER TABLE `projects` ADD `edm_uncertainty_ppm` real;--> statement-breakpoint
ALTER TABLE `sensors` ADD `laser_class` text;--> statement-breakpoint
ALTER TABLE `sensors` ADD `cert_number` text;--> statement-breakpoint
ALTER TABLE `sensors` ADD `cert_laboratory` text;--> statement-breakpoint
ALTER TABLE `sensors` ADD `cert_issued` text;--> statement-breakpoint
ALTER TABLE `sensors` ADD `cert_due` text;--> statement-breakpoint
ALTER TABLE `shots` ADD `reference_uncertainty_mm` real;--> statement-breakpoint
ALTER TABLE `stations` ADD `sigma_mm` real;--> statement-breakpoint
ALTER TABLE `tapes` ADD `uncertainty_mm` real;--> statement-breakpoint
ALTER TABLE `tapes` ADD `uncertainty_ppm` real;--> statement-breakpoint
ALTER TABLE `tapes` ADD `cert_number` text;--> statement-breakpoint
ALTER TABLE `tapes` ADD `cert_laboratory` text;--> statement-breakpoint
ALTER TABLE `tapes` ADD `cert_issued` text;--> statement-breakpoint
ALTER TABLE `tapes` ADD `cert_due` text;--> statement-breakpoint
ALTER TABLE `targets` ADD `sigma_mm` real;