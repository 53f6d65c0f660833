CREATE TABLE `campaign_review_settings` (
	`campaign_id` text PRIMARY KEY NOT NULL,
	`four_eyes` integer DEFAULT true NOT NULL,
	`updated_by_id` text,
	`updated_at` integer DEFAULT (cast(unixepoch('subsecond') * 1000 as integer)) NOT NULL,
	FOREIGN KEY (`campaign_id`) REFERENCES `campaigns`(`id`) ON UPDATE no action ON DELETE cascade,
	FOREIGN KEY (`updated_by_id`) REFERENCES `user`(`id`) ON UPDATE no action ON DELETE set null
);
--> statement-breakpoint
-- A re-fit after review: when a new successful fit of a star is written (by any writer: the worker's
-- raw INSERT, the seed, a script), the star's earlier fits and their live review decisions become
-- superseded, never deleted, and each superseded decision leaves an audit event. "Earlier" means a
-- batch started before this one (same start time: the lower fit id). If a newer batch already wrote a
-- fit for the star (two batches in flight), the row just written is the one superseded.
CREATE TRIGGER `fit_results_refit_supersedes` AFTER INSERT ON `fit_results`
WHEN NEW.`ok` = 1
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
END;
