ALTER TABLE `jobs` ADD `star_count` integer DEFAULT 1 NOT NULL;--> statement-breakpoint
ALTER TABLE `jobs` ADD `stars_left` integer DEFAULT 1 NOT NULL;--> statement-breakpoint
-- The two triggers that look at a star's other results (re-fit supersedes review, current result)
-- now run their statements only when the star has another result at all: one probe of
-- fit_results_star_idx. A batch's first fit of a star (the bulk of a large batch) no longer pays for
-- ten correlated statements per row; a re-fit does exactly what it did before (bodies unchanged).
DROP TRIGGER `fit_results_refit_supersedes`;--> statement-breakpoint
CREATE TRIGGER `fit_results_refit_supersedes` AFTER INSERT ON `fit_results`
WHEN NEW.`ok` = 1 AND EXISTS (SELECT 1 FROM `fit_results` WHERE `star_id` = NEW.`star_id` AND `id` <> NEW.`id`)
BEGIN
	INSERT INTO `audit_events` (`actor_id`, `campaign_id`, `action`, `details`)
		SELECT NULL, d.`campaign_id`, 'review.superseded',
			json_object('decisionId', d.`id`, 'fitResultId', d.`fit_result_id`, 'byFitResultId', NEW.`id`, 'batchId', NEW.`batch_id`, 'starId', NEW.`star_id`, 'reason', 'refit')
		FROM `review_decisions` d
		JOIN `fit_results` f ON f.`id` = d.`fit_result_id`
		JOIN `batches` b ON b.`id` = f.`batch_id`
		WHERE f.`star_id` = NEW.`star_id` AND f.`id` <> NEW.`id` AND d.`superseded_at` IS NULL
			AND (b.`created_at` < (SELECT `created_at` FROM `batches` WHERE `id` = NEW.`batch_id`)
				OR (b.`created_at` = (SELECT `created_at` FROM `batches` WHERE `id` = NEW.`batch_id`) AND f.`id` < NEW.`id`));
	UPDATE `review_decisions`
		SET `superseded_at` = cast(unixepoch('subsecond') * 1000 as integer), `superseded_reason` = 'refit'
		WHERE `superseded_at` IS NULL AND `fit_result_id` IN (
			SELECT f.`id` FROM `fit_results` f JOIN `batches` b ON b.`id` = f.`batch_id`
			WHERE f.`star_id` = NEW.`star_id` AND f.`id` <> NEW.`id`
				AND (b.`created_at` < (SELECT `created_at` FROM `batches` WHERE `id` = NEW.`batch_id`)
					OR (b.`created_at` = (SELECT `created_at` FROM `batches` WHERE `id` = NEW.`batch_id`) AND f.`id` < NEW.`id`)));
	UPDATE `fit_results` SET `review_status` = 'superseded'
		WHERE `star_id` = NEW.`star_id` AND `id` <> NEW.`id` AND `review_status` <> 'superseded'
			AND `batch_id` IN (
				SELECT b.`id` FROM `batches` b
				WHERE b.`created_at` < (SELECT `created_at` FROM `batches` WHERE `id` = NEW.`batch_id`)
					OR (b.`created_at` = (SELECT `created_at` FROM `batches` WHERE `id` = NEW.`batch_id`) AND `fit_results`.`id` < NEW.`id`));
	UPDATE `fit_results` SET `review_status` = 'superseded'
		WHERE `id` = NEW.`id` AND EXISTS (
			SELECT 1 FROM `fit_results` f JOIN `batches` b ON b.`id` = f.`batch_id`
			WHERE f.`star_id` = NEW.`star_id` AND f.`id` <> NEW.`id` AND f.`ok` = 1
				AND (b.`created_at` > (SELECT `created_at` FROM `batches` WHERE `id` = NEW.`batch_id`)
					OR (b.`created_at` = (SELECT `created_at` FROM `batches` WHERE `id` = NEW.`batch_id`) AND f.`id` > NEW.`id`)));
END;--> statement-breakpoint
DROP TRIGGER `fit_results_current`;--> statement-breakpoint
CREATE TRIGGER `fit_results_current` AFTER INSERT ON `fit_results`
WHEN EXISTS (SELECT 1 FROM `fit_results` WHERE `star_id` = NEW.`star_id` AND `id` <> NEW.`id`)
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
