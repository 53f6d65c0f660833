CREATE TABLE `api_tokens` (
	`id` text PRIMARY KEY NOT NULL,
	`user_id` text NOT NULL,
	`name` text NOT NULL,
	`token_hash` text NOT NULL,
	`prefix` text NOT NULL,
	`created_at` integer DEFAULT (cast(unixepoch('subsecond') * 1000 as integer)) NOT NULL,
	`last_used_at` integer,
	`expires_at` integer,
	`revoked_at` integer,
	FOREIGN KEY (`user_id`) REFERENCES `user`(`id`) ON UPDATE no action ON DELETE cascade
);
--> statement-breakpoint
CREATE UNIQUE INDEX `api_tokens_token_hash_unique` ON `api_tokens` (`token_hash`);--> statement-breakpoint
CREATE INDEX `api_tokens_user_idx` ON `api_tokens` (`user_id`);--> statement-breakpoint
CREATE TABLE `catalogue_releases` (
	`id` text PRIMARY KEY NOT NULL,
	`campaign_id` text NOT NULL,
	`title` text NOT NULL,
	`note` text DEFAULT '' NOT NULL,
	`filter` text NOT NULL,
	`row_count` integer NOT NULL,
	`band_library_version` text NOT NULL,
	`software_version` text NOT NULL,
	`released_by_id` text,
	`created_at` integer DEFAULT (cast(unixepoch('subsecond') * 1000 as integer)) NOT NULL,
	FOREIGN KEY (`campaign_id`) REFERENCES `campaigns`(`id`) ON UPDATE no action ON DELETE cascade,
	FOREIGN KEY (`released_by_id`) REFERENCES `user`(`id`) ON UPDATE no action ON DELETE set null
);
--> statement-breakpoint
CREATE INDEX `catalogue_releases_campaign_idx` ON `catalogue_releases` (`campaign_id`,`created_at`);--> statement-breakpoint
CREATE TABLE `review_decisions` (
	`id` integer PRIMARY KEY AUTOINCREMENT NOT NULL,
	`fit_result_id` integer NOT NULL,
	`campaign_id` text NOT NULL,
	`reviewer_id` text,
	`decision` text NOT NULL,
	`reason` text,
	`comment` text DEFAULT '' NOT NULL,
	`bulk_filter` text,
	`created_at` integer DEFAULT (cast(unixepoch('subsecond') * 1000 as integer)) NOT NULL,
	`superseded_at` integer,
	`superseded_reason` text,
	FOREIGN KEY (`fit_result_id`) REFERENCES `fit_results`(`id`) ON UPDATE no action ON DELETE cascade,
	FOREIGN KEY (`campaign_id`) REFERENCES `campaigns`(`id`) ON UPDATE no action ON DELETE cascade,
	FOREIGN KEY (`reviewer_id`) REFERENCES `user`(`id`) ON UPDATE no action ON DELETE set null
);
--> statement-breakpoint
CREATE INDEX `review_decisions_fit_idx` ON `review_decisions` (`fit_result_id`,`created_at`);--> statement-breakpoint
CREATE INDEX `review_decisions_campaign_idx` ON `review_decisions` (`campaign_id`,`created_at`);