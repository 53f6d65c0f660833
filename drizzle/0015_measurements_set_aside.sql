ALTER TABLE `measurements` ADD `set_aside_at` integer;--> statement-breakpoint
ALTER TABLE `measurements` ADD `set_aside_by_id` text REFERENCES user(id) ON DELETE set null;--> statement-breakpoint
ALTER TABLE `measurements` ADD `set_aside_reason` text;