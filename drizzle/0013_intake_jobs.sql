CREATE TABLE `intake_jobs` (
	`id` text PRIMARY KEY NOT NULL,
	`upload_id` text NOT NULL,
	`campaign_id` text NOT NULL,
	`kind` text NOT NULL,
	`status` text DEFAULT 'pending' NOT NULL,
	`input` text NOT NULL,
	`outcome` text,
	`rows_read` integer DEFAULT 0 NOT NULL,
	`actor_id` text,
	`created_at` integer DEFAULT (cast(unixepoch('subsecond') * 1000 as integer)) NOT NULL,
	`started_at` integer,
	`finished_at` integer,
	FOREIGN KEY (`upload_id`) REFERENCES `uploads`(`id`) ON UPDATE no action ON DELETE cascade,
	FOREIGN KEY (`campaign_id`) REFERENCES `campaigns`(`id`) ON UPDATE no action ON DELETE cascade,
	FOREIGN KEY (`actor_id`) REFERENCES `user`(`id`) ON UPDATE no action ON DELETE set null
);
--> statement-breakpoint
CREATE INDEX `intake_jobs_upload_idx` ON `intake_jobs` (`upload_id`,`created_at`);--> statement-breakpoint
CREATE INDEX `intake_jobs_pending_idx` ON `intake_jobs` (`status`,`created_at`);--> statement-breakpoint
ALTER TABLE `uploads` ADD `inspection` text;--> statement-breakpoint
ALTER TABLE `uploads` ADD `last_check` text;