ALTER TABLE `sensors` ADD `intrinsics` text;--> statement-breakpoint
ALTER TABLE `sensors` ADD `depth_scale_mm` real;