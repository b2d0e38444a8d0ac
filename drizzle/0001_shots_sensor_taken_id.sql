DROP INDEX `shots_sensor_taken`;--> statement-breakpoint
CREATE INDEX `shots_sensor_taken` ON `shots` (`sensor_id`,`taken_at`,`id`);