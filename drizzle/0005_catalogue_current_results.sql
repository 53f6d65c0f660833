ALTER TABLE `fit_results` ADD `is_current` integer DEFAULT true NOT NULL;--> statement-breakpoint
CREATE INDEX `fit_results_current_teff_idx` ON `fit_results` (`campaign_id`,`teff_k`) WHERE is_current = 1;--> statement-breakpoint
CREATE INDEX `fit_results_current_lum_idx` ON `fit_results` (`campaign_id`,`lum_lsun`) WHERE is_current = 1;--> statement-breakpoint
CREATE INDEX `fit_results_current_radius_idx` ON `fit_results` (`campaign_id`,`radius_rsun`) WHERE is_current = 1;--> statement-breakpoint
CREATE INDEX `fit_results_current_chi2_idx` ON `fit_results` (`campaign_id`,`chi2_red`) WHERE is_current = 1;--> statement-breakpoint
CREATE INDEX `fit_results_current_status_idx` ON `fit_results` (`campaign_id`,`review_status`,`teff_k`) WHERE is_current = 1;--> statement-breakpoint
CREATE INDEX `fit_results_current_star_idx` ON `fit_results` (`star_id`) WHERE is_current = 1;--> statement-breakpoint
-- Existing results: the current one per star is its newest successful fit, else its newest failure
-- ("newest" = the batch started last; same start time: the higher fit id).
UPDATE `fit_results` SET `is_current` = (`id` = (
	SELECT f.`id` FROM `fit_results` f JOIN `batches` b ON b.`id` = f.`batch_id`
	WHERE f.`star_id` = `fit_results`.`star_id`
	ORDER BY f.`ok` DESC, b.`created_at` DESC, f.`id` DESC LIMIT 1));
--> statement-breakpoint
-- Keeps is_current whoever writes a result (the worker's raw INSERT, the seed, a script): the row
-- just written outranks the star's current one when it is a success and the other a failure, or
-- when both are alike and its batch is newer. Otherwise the row just written is not current.
-- Touches only is_current, so it does not depend on the order relative to fit_results_refit_supersedes.
CREATE TRIGGER `fit_results_current` AFTER INSERT ON `fit_results`
BEGIN
	UPDATE `fit_results` SET `is_current` = 0
		WHERE `star_id` = NEW.`star_id` AND `id` <> NEW.`id` AND `is_current` = 1
			AND (`ok` < NEW.`ok` OR (`ok` = NEW.`ok` AND (
				(SELECT `created_at` FROM `batches` WHERE `id` = `fit_results`.`batch_id`) < (SELECT `created_at` FROM `batches` WHERE `id` = NEW.`batch_id`)
				OR ((SELECT `created_at` FROM `batches` WHERE `id` = `fit_results`.`batch_id`) = (SELECT `created_at` FROM `batches` WHERE `id` = NEW.`batch_id`) AND `id` < NEW.`id`))));
	UPDATE `fit_results` SET `is_current` = 0
		WHERE `id` = NEW.`id` AND EXISTS (
			SELECT 1 FROM `fit_results` f WHERE f.`star_id` = NEW.`star_id` AND f.`id` <> NEW.`id` AND f.`is_current` = 1);
END;
