CREATE TABLE `catalogue_versions` (
	`campaign_id` text PRIMARY KEY NOT NULL,
	`version` integer DEFAULT 0 NOT NULL,
	FOREIGN KEY (`campaign_id`) REFERENCES `campaigns`(`id`) ON UPDATE no action ON DELETE cascade
);
--> statement-breakpoint
CREATE INDEX `fit_results_current_summary_idx` ON `fit_results` (`campaign_id`,`review_status`,`teff_k`,`lum_lsun`,`chi2_red`) WHERE is_current = 1;--> statement-breakpoint
-- The campaign's stamp grows with every change a total or a diagram could see, whoever writes
-- (the worker's raw INSERT, review decisions, the seed, a script). Caches compare stamps, not times.
CREATE TRIGGER `catalogue_versions_result_insert` AFTER INSERT ON `fit_results`
BEGIN
	INSERT INTO `catalogue_versions` (`campaign_id`, `version`) VALUES (NEW.`campaign_id`, 1)
		ON CONFLICT (`campaign_id`) DO UPDATE SET `version` = `version` + 1;
END;
--> statement-breakpoint
CREATE TRIGGER `catalogue_versions_result_update` AFTER UPDATE OF `is_current`, `review_status`, `ok`, `teff_k`, `lum_lsun`, `radius_rsun`, `chi2_red`, `flags`, `campaign_id` ON `fit_results`
BEGIN
	INSERT INTO `catalogue_versions` (`campaign_id`, `version`) VALUES (NEW.`campaign_id`, 1)
		ON CONFLICT (`campaign_id`) DO UPDATE SET `version` = `version` + 1;
END;
--> statement-breakpoint
CREATE TRIGGER `catalogue_versions_result_delete` AFTER DELETE ON `fit_results`
BEGIN
	INSERT INTO `catalogue_versions` (`campaign_id`, `version`) VALUES (OLD.`campaign_id`, 1)
		ON CONFLICT (`campaign_id`) DO UPDATE SET `version` = `version` + 1;
END;
--> statement-breakpoint
CREATE TRIGGER `catalogue_versions_star_key` AFTER UPDATE OF `star_key` ON `stars`
BEGIN
	INSERT INTO `catalogue_versions` (`campaign_id`, `version`) VALUES (NEW.`campaign_id`, 1)
		ON CONFLICT (`campaign_id`) DO UPDATE SET `version` = `version` + 1;
END;
