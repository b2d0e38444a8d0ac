CREATE TABLE `project_edms` (
	`project_id` text NOT NULL,
	`edm_id` text NOT NULL,
	PRIMARY KEY(`project_id`, `edm_id`),
	FOREIGN KEY (`project_id`) REFERENCES `projects`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`edm_id`) REFERENCES `edms`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE INDEX `project_edms_edm` ON `project_edms` (`edm_id`);--> statement-breakpoint
CREATE TABLE `project_tapes` (
	`project_id` text NOT NULL,
	`tape_id` text NOT NULL,
	PRIMARY KEY(`project_id`, `tape_id`),
	FOREIGN KEY (`project_id`) REFERENCES `projects`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`tape_id`) REFERENCES `tapes`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE INDEX `project_tapes_tape` ON `project_tapes` (`tape_id`);