CREATE TABLE `band_definitions` (
	`id` integer PRIMARY KEY AUTOINCREMENT NOT NULL,
	`key` text NOT NULL,
	`band_version` integer NOT NULL,
	`content_hash` text NOT NULL,
	`definition` text NOT NULL,
	`created_at` integer DEFAULT (cast(unixepoch('subsecond') * 1000 as integer)) NOT NULL
);
--> statement-breakpoint
CREATE UNIQUE INDEX `band_definitions_key_version_unique` ON `band_definitions` (`key`,`band_version`);--> statement-breakpoint
CREATE TABLE `band_library_entries` (
	`version_id` integer NOT NULL,
	`key` text NOT NULL,
	`definition_id` integer NOT NULL,
	`position` integer NOT NULL,
	PRIMARY KEY(`version_id`, `key`),
	FOREIGN KEY (`version_id`) REFERENCES `band_library_versions`(`id`) ON UPDATE no action ON DELETE restrict,
	FOREIGN KEY (`definition_id`) REFERENCES `band_definitions`(`id`) ON UPDATE no action ON DELETE restrict
);
--> statement-breakpoint
CREATE INDEX `band_library_entries_definition_idx` ON `band_library_entries` (`definition_id`);--> statement-breakpoint
CREATE TABLE `band_library_versions` (
	`id` integer PRIMARY KEY AUTOINCREMENT NOT NULL,
	`label` text NOT NULL,
	`parent_id` integer,
	`created_by_id` text,
	`reason` text NOT NULL,
	`change` text DEFAULT '{}' NOT NULL,
	`created_at` integer DEFAULT (cast(unixepoch('subsecond') * 1000 as integer)) NOT NULL,
	FOREIGN KEY (`created_by_id`) REFERENCES `user`(`id`) ON UPDATE no action ON DELETE set null
);
--> statement-breakpoint
CREATE UNIQUE INDEX `band_library_versions_label_unique` ON `band_library_versions` (`label`);--> statement-breakpoint
CREATE UNIQUE INDEX `band_library_versions_parent_unique` ON `band_library_versions` (`parent_id`);--> statement-breakpoint
ALTER TABLE `user` ADD `deactivated_at` integer;--> statement-breakpoint
-- Band library versions are immutable: published results point at them. A change is a new version.
CREATE TRIGGER `band_definitions_no_update` BEFORE UPDATE ON `band_definitions` BEGIN SELECT RAISE(ABORT, 'band definitions are immutable: make a new band library version'); END;--> statement-breakpoint
CREATE TRIGGER `band_definitions_no_delete` BEFORE DELETE ON `band_definitions` BEGIN SELECT RAISE(ABORT, 'band definitions are immutable: make a new band library version'); END;--> statement-breakpoint
CREATE TRIGGER `band_library_entries_no_update` BEFORE UPDATE ON `band_library_entries` BEGIN SELECT RAISE(ABORT, 'band library versions are immutable: make a new version'); END;--> statement-breakpoint
CREATE TRIGGER `band_library_entries_no_delete` BEFORE DELETE ON `band_library_entries` BEGIN SELECT RAISE(ABORT, 'band library versions are immutable: make a new version'); END;--> statement-breakpoint
CREATE TRIGGER `band_library_versions_no_update` BEFORE UPDATE ON `band_library_versions` BEGIN SELECT RAISE(ABORT, 'band library versions are immutable: make a new version'); END;--> statement-breakpoint
CREATE TRIGGER `band_library_versions_no_delete` BEFORE DELETE ON `band_library_versions` BEGIN SELECT RAISE(ABORT, 'band library versions are immutable: make a new version'); END;
