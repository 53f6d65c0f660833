ALTER TABLE `jobs` ADD `star_count` integer DEFAULT 1 NOT NULL;--> statement-breakpoint
ALTER TABLE `jobs` ADD `stars_left` integer DEFAULT 1 NOT NULL;--> statement-breakpoint
-- The two triggers that look at a star's other results (re-fit: carry-over and supersede, from
-- drizzle/0010; current result, from 0005) now run their statements only when the star has another
-- result at all: one probe of fit_results_star_idx. Every statement of both bodies reads the star's
-- other results, so without one they did nothing, at the price of a dozen correlated statements per
-- row; a re-fit does exactly what it did before (bodies unchanged). A later change to either
-- trigger keeps this WHEN guard.
DROP TRIGGER `fit_results_refit_supersedes`;--> statement-breakpoint
CREATE TRIGGER `fit_results_refit_supersedes` AFTER INSERT ON `fit_results`
WHEN NEW.`ok` = 1 AND EXISTS (SELECT 1 FROM `fit_results` WHERE `star_id` = NEW.`star_id` AND `id` <> NEW.`id`)
BEGIN
	INSERT INTO `review_carryovers` (`campaign_id`, `fit_result_id`, `from_fit_result_id`, `from_decision_id`, `outcome`, `reasons`,
			`old_teff_k`, `old_teff_err_k`, `new_teff_k`, `new_teff_err_k`, `old_theta_mas`, `old_theta_err_mas`, `new_theta_mas`, `new_theta_err_mas`, `old_flags`, `new_flags`)
		SELECT NEW.`campaign_id`, NEW.`id`, x.`fid`, x.`did`, CASE WHEN x.`reasons` = '' THEN 'carried' ELSE 'returned' END, x.`reasons`,
			x.`teff_k`, x.`teff_err_k`, NEW.`teff_k`, NEW.`teff_err_k`, x.`theta_mas`, x.`theta_err_mas`, NEW.`theta_mas`, NEW.`theta_err_mas`, x.`flags`, NEW.`flags`
		FROM (
			SELECT f.`id` AS `fid`, d.`id` AS `did`, f.`teff_k`, f.`teff_err_k`, f.`theta_mas`, f.`theta_err_mas`, f.`flags`,
				trim(
					CASE WHEN b.`options` IS NOT (SELECT `options` FROM `batches` WHERE `id` = NEW.`batch_id`) THEN 'options ' ELSE '' END ||
					CASE WHEN coalesce(f.`bands_used`, '') <> coalesce(NEW.`bands_used`, '') THEN 'bands ' ELSE '' END ||
					CASE WHEN f.`flags` <> NEW.`flags` THEN 'flags ' ELSE '' END ||
					CASE WHEN f.`teff_k` IS NOT NULL AND NEW.`teff_k` IS NOT NULL AND f.`teff_err_k` > 0 AND NEW.`teff_err_k` > 0
						AND abs(NEW.`teff_k` - f.`teff_k`) < 0.25 * min(f.`teff_err_k`, NEW.`teff_err_k`) THEN '' ELSE 'teff ' END ||
					CASE WHEN f.`theta_mas` IS NOT NULL AND NEW.`theta_mas` IS NOT NULL AND f.`theta_err_mas` > 0 AND NEW.`theta_err_mas` > 0
						AND abs(NEW.`theta_mas` - f.`theta_mas`) < 0.25 * min(f.`theta_err_mas`, NEW.`theta_err_mas`) THEN '' ELSE 'theta ' END ||
					CASE WHEN d.`decision` = 'accepted' AND d.`reviewer_id` IS NOT NULL
						AND d.`reviewer_id` = (SELECT `started_by_id` FROM `batches` WHERE `id` = NEW.`batch_id`)
						AND coalesce((SELECT `four_eyes` FROM `campaign_review_settings` WHERE `campaign_id` = NEW.`campaign_id`), 1) = 1 THEN 'four_eyes' ELSE '' END
				) AS `reasons`
			FROM `review_decisions` d
			JOIN `fit_results` f ON f.`id` = d.`fit_result_id`
			JOIN `batches` b ON b.`id` = f.`batch_id`
			WHERE f.`star_id` = NEW.`star_id` AND f.`id` <> NEW.`id` AND d.`superseded_at` IS NULL
				AND (b.`created_at` < (SELECT `created_at` FROM `batches` WHERE `id` = NEW.`batch_id`)
					OR (b.`created_at` = (SELECT `created_at` FROM `batches` WHERE `id` = NEW.`batch_id`) AND f.`id` < NEW.`id`))
				AND NOT EXISTS (
					SELECT 1 FROM `fit_results` f2 JOIN `batches` b2 ON b2.`id` = f2.`batch_id`
					WHERE f2.`star_id` = NEW.`star_id` AND f2.`id` <> NEW.`id` AND f2.`ok` = 1
						AND (b2.`created_at` > (SELECT `created_at` FROM `batches` WHERE `id` = NEW.`batch_id`)
							OR (b2.`created_at` = (SELECT `created_at` FROM `batches` WHERE `id` = NEW.`batch_id`) AND f2.`id` > NEW.`id`)))
			ORDER BY b.`created_at` DESC, f.`id` DESC, d.`id` DESC
			LIMIT 1
		) x;
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
	INSERT INTO `review_decisions` (`fit_result_id`, `campaign_id`, `reviewer_id`, `decision`, `reason`, `comment`, `bulk_filter`, `created_at`, `carried_from_decision_id`, `four_eyes_off`)
		SELECT NEW.`id`, d.`campaign_id`, d.`reviewer_id`, d.`decision`, d.`reason`, d.`comment`, d.`bulk_filter`, cast(unixepoch('subsecond') * 1000 as integer), d.`id`, d.`four_eyes_off`
		FROM `review_carryovers` c JOIN `review_decisions` d ON d.`id` = c.`from_decision_id`
		WHERE c.`fit_result_id` = NEW.`id` AND c.`outcome` = 'carried';
	UPDATE `fit_results` SET `review_status` = (
			SELECT d.`decision` FROM `review_carryovers` c JOIN `review_decisions` d ON d.`id` = c.`from_decision_id` WHERE c.`fit_result_id` = NEW.`id`)
		WHERE `id` = NEW.`id` AND EXISTS (SELECT 1 FROM `review_carryovers` c WHERE c.`fit_result_id` = NEW.`id` AND c.`outcome` = 'carried');
	INSERT INTO `audit_events` (`actor_id`, `campaign_id`, `action`, `details`)
		SELECT NULL, c.`campaign_id`, CASE c.`outcome` WHEN 'carried' THEN 'review.carried_over' ELSE 'review.returned' END,
			json_object('fitResultId', NEW.`id`, 'fromFitResultId', c.`from_fit_result_id`, 'fromDecisionId', c.`from_decision_id`,
				'decisionId', (SELECT n.`id` FROM `review_decisions` n WHERE n.`fit_result_id` = NEW.`id` AND n.`carried_from_decision_id` = c.`from_decision_id`),
				'decision', d.`decision`, 'batchId', NEW.`batch_id`, 'starId', NEW.`star_id`, 'reasons', c.`reasons`,
				'oldTeffK', c.`old_teff_k`, 'newTeffK', c.`new_teff_k`, 'oldThetaMas', c.`old_theta_mas`, 'newThetaMas', c.`new_theta_mas`,
				'oldFlags', c.`old_flags`, 'newFlags', c.`new_flags`)
		FROM `review_carryovers` c JOIN `review_decisions` d ON d.`id` = c.`from_decision_id`
		WHERE c.`fit_result_id` = NEW.`id`;
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
