CREATE TABLE `fit_result_flags` (
	`fit_result_id` integer NOT NULL,
	`campaign_id` text NOT NULL,
	`code` text NOT NULL,
	`star_key` text NOT NULL,
	`teff_k` real,
	`lum_lsun` real,
	`radius_rsun` real,
	`chi2_red` real,
	PRIMARY KEY(`fit_result_id`, `code`),
	FOREIGN KEY (`fit_result_id`) REFERENCES `fit_results`(`id`) ON UPDATE no action ON DELETE cascade,
	FOREIGN KEY (`campaign_id`) REFERENCES `campaigns`(`id`) ON UPDATE no action ON DELETE cascade
);
--> statement-breakpoint
CREATE INDEX `fit_result_flags_teff_idx` ON `fit_result_flags` (`campaign_id`,`code`,`teff_k`,`fit_result_id`);--> statement-breakpoint
CREATE INDEX `fit_result_flags_lum_idx` ON `fit_result_flags` (`campaign_id`,`code`,`lum_lsun`,`fit_result_id`);--> statement-breakpoint
CREATE INDEX `fit_result_flags_radius_idx` ON `fit_result_flags` (`campaign_id`,`code`,`radius_rsun`,`fit_result_id`);--> statement-breakpoint
CREATE INDEX `fit_result_flags_chi2_idx` ON `fit_result_flags` (`campaign_id`,`code`,`chi2_red`,`fit_result_id`);--> statement-breakpoint
CREATE INDEX `fit_result_flags_star_idx` ON `fit_result_flags` (`campaign_id`,`code`,`star_key`,`fit_result_id`);--> statement-breakpoint
DROP INDEX `fit_results_current_status_idx`;--> statement-breakpoint
CREATE INDEX `fit_results_current_review_idx` ON `fit_results` (`campaign_id`,`review_status`) WHERE is_current = 1;--> statement-breakpoint
INSERT OR IGNORE INTO `fit_result_flags` (`fit_result_id`, `campaign_id`, `code`, `star_key`, `teff_k`, `lum_lsun`, `radius_rsun`, `chi2_red`)
	SELECT f.`id`, f.`campaign_id`, j.`value`, s.`star_key`, f.`teff_k`, f.`lum_lsun`, f.`radius_rsun`, f.`chi2_red`
	FROM `fit_results` f JOIN `stars` s ON s.`id` = f.`star_id`,
		json_each('[' || replace(json_quote(f.`flags`), ' ', '","') || ']') j
	WHERE f.`is_current` = 1 AND f.`flags` <> '' AND j.`value` <> '';
--> statement-breakpoint
-- A new result's flags join the index when it is current. Reads the stored is_current (not NEW's),
-- so the outcome is the same whichever of this and fit_results_current runs first.
CREATE TRIGGER `fit_result_flags_insert` AFTER INSERT ON `fit_results`
WHEN NEW.`flags` <> ''
BEGIN
	INSERT OR IGNORE INTO `fit_result_flags` (`fit_result_id`, `campaign_id`, `code`, `star_key`, `teff_k`, `lum_lsun`, `radius_rsun`, `chi2_red`)
		SELECT NEW.`id`, NEW.`campaign_id`, j.`value`, s.`star_key`, NEW.`teff_k`, NEW.`lum_lsun`, NEW.`radius_rsun`, NEW.`chi2_red`
		FROM json_each('[' || replace(json_quote(NEW.`flags`), ' ', '","') || ']') j JOIN `stars` s ON s.`id` = NEW.`star_id`
		WHERE j.`value` <> '' AND (SELECT `is_current` FROM `fit_results` WHERE `id` = NEW.`id`) = 1;
END;
--> statement-breakpoint
-- A result that stops being current leaves the index.
CREATE TRIGGER `fit_result_flags_not_current` AFTER UPDATE OF `is_current` ON `fit_results`
WHEN NEW.`is_current` = 0 AND OLD.`is_current` = 1
BEGIN
	DELETE FROM `fit_result_flags` WHERE `fit_result_id` = NEW.`id`;
END;
