CREATE TABLE `mapping_presets` (
	`id` text PRIMARY KEY NOT NULL,
	`campaign_id` text NOT NULL,
	`name` text NOT NULL,
	`mapping` text NOT NULL,
	`created_by_id` text,
	`created_at` integer DEFAULT (cast(unixepoch('subsecond') * 1000 as integer)) NOT NULL,
	FOREIGN KEY (`campaign_id`) REFERENCES `campaigns`(`id`) ON UPDATE no action ON DELETE cascade,
	FOREIGN KEY (`created_by_id`) REFERENCES `user`(`id`) ON UPDATE no action ON DELETE set null
);
--> statement-breakpoint
CREATE UNIQUE INDEX `mapping_presets_name_unique` ON `mapping_presets` (`campaign_id`,`name`);--> statement-breakpoint
CREATE TABLE `measurements` (
	`id` integer PRIMARY KEY AUTOINCREMENT NOT NULL,
	`star_id` integer NOT NULL,
	`band_key` text NOT NULL,
	`source` text NOT NULL,
	`upload_id` text,
	`mag` real,
	`mag_err` real,
	`fnu_jy` real,
	`fnu_err_jy` real,
	`upper_limit` integer DEFAULT false NOT NULL,
	`quality` text,
	`observation` text,
	`created_at` integer DEFAULT (cast(unixepoch('subsecond') * 1000 as integer)) NOT NULL,
	FOREIGN KEY (`star_id`) REFERENCES `stars`(`id`) ON UPDATE no action ON DELETE cascade,
	FOREIGN KEY (`upload_id`) REFERENCES `uploads`(`id`) ON UPDATE no action ON DELETE set null
);
--> statement-breakpoint
CREATE UNIQUE INDEX `measurements_star_band_source_unique` ON `measurements` (`star_id`,`band_key`,`source`);--> statement-breakpoint
CREATE INDEX `measurements_upload_idx` ON `measurements` (`upload_id`);--> statement-breakpoint
CREATE TABLE `stars` (
	`id` integer PRIMARY KEY AUTOINCREMENT NOT NULL,
	`campaign_id` text NOT NULL,
	`star_key` text NOT NULL,
	`ra_deg` real,
	`dec_deg` real,
	`parallax_mas` real,
	`parallax_err_mas` real,
	`av_mag` real,
	`created_at` integer DEFAULT (cast(unixepoch('subsecond') * 1000 as integer)) NOT NULL,
	`updated_at` integer DEFAULT (cast(unixepoch('subsecond') * 1000 as integer)) NOT NULL,
	FOREIGN KEY (`campaign_id`) REFERENCES `campaigns`(`id`) ON UPDATE no action ON DELETE cascade
);
--> statement-breakpoint
CREATE UNIQUE INDEX `stars_campaign_key_unique` ON `stars` (`campaign_id`,`star_key`);--> statement-breakpoint
CREATE TABLE `uploads` (
	`id` text PRIMARY KEY NOT NULL,
	`campaign_id` text NOT NULL,
	`original_name` text NOT NULL,
	`stored_path` text NOT NULL,
	`size_bytes` integer NOT NULL,
	`sha256` text NOT NULL,
	`detected_format` text,
	`status` text DEFAULT 'received' NOT NULL,
	`report` text DEFAULT '[]' NOT NULL,
	`row_count` integer,
	`imported_row_count` integer,
	`uploaded_by_id` text,
	`created_at` integer DEFAULT (cast(unixepoch('subsecond') * 1000 as integer)) NOT NULL,
	`imported_at` integer,
	FOREIGN KEY (`campaign_id`) REFERENCES `campaigns`(`id`) ON UPDATE no action ON DELETE cascade,
	FOREIGN KEY (`uploaded_by_id`) REFERENCES `user`(`id`) ON UPDATE no action ON DELETE set null
);
--> statement-breakpoint
CREATE INDEX `uploads_campaign_idx` ON `uploads` (`campaign_id`,`created_at`);--> statement-breakpoint
CREATE TABLE `batches` (
	`id` text PRIMARY KEY NOT NULL,
	`campaign_id` text NOT NULL,
	`started_by_id` text,
	`options` text NOT NULL,
	`band_library_version` text NOT NULL,
	`software_version` text NOT NULL,
	`status` text DEFAULT 'queued' NOT NULL,
	`star_count` integer DEFAULT 0 NOT NULL,
	`refit_of_batch_id` text,
	`created_at` integer DEFAULT (cast(unixepoch('subsecond') * 1000 as integer)) NOT NULL,
	`finished_at` integer,
	`notified_at` integer,
	FOREIGN KEY (`campaign_id`) REFERENCES `campaigns`(`id`) ON UPDATE no action ON DELETE cascade,
	FOREIGN KEY (`started_by_id`) REFERENCES `user`(`id`) ON UPDATE no action ON DELETE set null
);
--> statement-breakpoint
CREATE INDEX `batches_campaign_idx` ON `batches` (`campaign_id`,`created_at`);--> statement-breakpoint
CREATE TABLE `fit_results` (
	`id` integer PRIMARY KEY AUTOINCREMENT NOT NULL,
	`batch_id` text NOT NULL,
	`campaign_id` text NOT NULL,
	`star_id` integer NOT NULL,
	`ok` integer NOT NULL,
	`failure_reason` text,
	`teff_k` real,
	`teff_err_k` real,
	`teff_err_formal_k` real,
	`teff_lower_k` real,
	`theta_mas` real,
	`theta_err_mas` real,
	`radius_rsun` real,
	`radius_err_rsun` real,
	`lum_lsun` real,
	`lum_err_lsun` real,
	`fbol_cgs` real,
	`fbol_err_cgs` real,
	`av_mag` real,
	`av_err_mag` real,
	`chi2_red` real,
	`n_bands` integer,
	`bands_used` text,
	`ir_excess_sigma` real,
	`flags` text DEFAULT '' NOT NULL,
	`detail` text,
	`band_library_version` text NOT NULL,
	`software_version` text NOT NULL,
	`review_status` text DEFAULT 'pending' NOT NULL,
	`created_at` integer DEFAULT (cast(unixepoch('subsecond') * 1000 as integer)) NOT NULL,
	FOREIGN KEY (`batch_id`) REFERENCES `batches`(`id`) ON UPDATE no action ON DELETE cascade,
	FOREIGN KEY (`campaign_id`) REFERENCES `campaigns`(`id`) ON UPDATE no action ON DELETE cascade,
	FOREIGN KEY (`star_id`) REFERENCES `stars`(`id`) ON UPDATE no action ON DELETE cascade
);
--> statement-breakpoint
CREATE UNIQUE INDEX `fit_results_batch_star_unique` ON `fit_results` (`batch_id`,`star_id`);--> statement-breakpoint
CREATE INDEX `fit_results_campaign_review_idx` ON `fit_results` (`campaign_id`,`review_status`);--> statement-breakpoint
CREATE INDEX `fit_results_campaign_teff_idx` ON `fit_results` (`campaign_id`,`teff_k`);--> statement-breakpoint
CREATE INDEX `fit_results_star_idx` ON `fit_results` (`star_id`,`created_at`);--> statement-breakpoint
CREATE TABLE `jobs` (
	`id` integer PRIMARY KEY AUTOINCREMENT NOT NULL,
	`kind` text NOT NULL,
	`batch_id` text,
	`payload` text NOT NULL,
	`idempotency_key` text NOT NULL,
	`status` text DEFAULT 'pending' NOT NULL,
	`priority` integer DEFAULT 0 NOT NULL,
	`attempts` integer DEFAULT 0 NOT NULL,
	`max_attempts` integer DEFAULT 5 NOT NULL,
	`run_after` integer DEFAULT (cast(unixepoch('subsecond') * 1000 as integer)) NOT NULL,
	`lease_owner` text,
	`lease_expires_at` integer,
	`last_error` text,
	`created_at` integer DEFAULT (cast(unixepoch('subsecond') * 1000 as integer)) NOT NULL,
	`finished_at` integer,
	FOREIGN KEY (`batch_id`) REFERENCES `batches`(`id`) ON UPDATE no action ON DELETE cascade
);
--> statement-breakpoint
CREATE UNIQUE INDEX `jobs_idempotency_unique` ON `jobs` (`idempotency_key`);--> statement-breakpoint
CREATE INDEX `jobs_claim_idx` ON `jobs` (`status`,`priority`,`run_after`);--> statement-breakpoint
CREATE INDEX `jobs_batch_idx` ON `jobs` (`batch_id`,`status`);