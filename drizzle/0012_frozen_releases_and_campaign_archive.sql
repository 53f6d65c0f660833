CREATE TABLE `release_files` (
	`release_id` text NOT NULL,
	`format` text NOT NULL,
	`file_name` text NOT NULL,
	`content_type` text NOT NULL,
	`sha256` text NOT NULL,
	`size_bytes` integer NOT NULL,
	`content` blob NOT NULL,
	PRIMARY KEY(`release_id`, `format`),
	FOREIGN KEY (`release_id`) REFERENCES `catalogue_releases`(`id`) ON UPDATE no action ON DELETE cascade
);
--> statement-breakpoint
CREATE TABLE `release_rows` (
	`release_id` text NOT NULL,
	`star_key` text NOT NULL,
	`batch_id` text,
	`values` text NOT NULL,
	PRIMARY KEY(`release_id`, `star_key`),
	FOREIGN KEY (`release_id`) REFERENCES `catalogue_releases`(`id`) ON UPDATE no action ON DELETE cascade
);
--> statement-breakpoint
ALTER TABLE `campaigns` ADD `archived_at` integer;--> statement-breakpoint
ALTER TABLE `catalogue_releases` ADD `frozen` integer DEFAULT false NOT NULL;--> statement-breakpoint
ALTER TABLE `catalogue_releases` ADD `provenance` text;--> statement-breakpoint
-- A frozen release never changes (decision record 0017): its files and rows cannot be updated, nor
-- what it says it holds. They go only with their campaign (cascade).
CREATE TRIGGER `release_files_immutable` BEFORE UPDATE ON `release_files`
BEGIN
	SELECT RAISE(ABORT, 'release files are immutable');
END;
--> statement-breakpoint
CREATE TRIGGER `release_rows_immutable` BEFORE UPDATE ON `release_rows`
BEGIN
	SELECT RAISE(ABORT, 'release rows are immutable');
END;
--> statement-breakpoint
CREATE TRIGGER `catalogue_releases_frozen` BEFORE UPDATE OF `filter`, `row_count`, `band_library_version`, `software_version`, `provenance`, `frozen`, `title`, `note`, `created_at` ON `catalogue_releases`
WHEN OLD.`frozen` = 1
BEGIN
	SELECT RAISE(ABORT, 'a frozen release is immutable');
END;
