CREATE TABLE `left_out_values` (
	`id` integer PRIMARY KEY AUTOINCREMENT NOT NULL,
	`star_id` integer NOT NULL,
	`band_key` text NOT NULL,
	`source` text NOT NULL,
	`upload_id` text,
	`reason` text NOT NULL,
	`detail` text NOT NULL,
	`created_at` integer DEFAULT (cast(unixepoch('subsecond') * 1000 as integer)) NOT NULL,
	FOREIGN KEY (`star_id`) REFERENCES `stars`(`id`) ON UPDATE no action ON DELETE cascade,
	FOREIGN KEY (`upload_id`) REFERENCES `uploads`(`id`) ON UPDATE no action ON DELETE set null
);
--> statement-breakpoint
CREATE UNIQUE INDEX `left_out_values_star_band_source_unique` ON `left_out_values` (`star_id`,`band_key`,`source`);--> statement-breakpoint
ALTER TABLE `stars` ADD `distance_pc` real;--> statement-breakpoint
ALTER TABLE `stars` ADD `distance_lo_pc` real;--> statement-breakpoint
ALTER TABLE `stars` ADD `distance_hi_pc` real;--> statement-breakpoint
ALTER TABLE `stars` ADD `parallax_origin` text;--> statement-breakpoint
ALTER TABLE `stars` ADD `possible_companion` integer DEFAULT false NOT NULL;