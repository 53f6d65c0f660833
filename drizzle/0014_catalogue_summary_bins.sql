CREATE TABLE `catalogue_bins` (
	`campaign_id` text NOT NULL,
	`flag` text NOT NULL,
	`review_status` text NOT NULL,
	`chi2_class` integer NOT NULL,
	`teff_bin` integer NOT NULL,
	`lum_bin` integer NOT NULL,
	`n` integer NOT NULL,
	PRIMARY KEY(`campaign_id`, `flag`, `review_status`, `chi2_class`, `teff_bin`, `lum_bin`),
	FOREIGN KEY (`campaign_id`) REFERENCES `campaigns`(`id`) ON UPDATE no action ON DELETE cascade
) WITHOUT ROWID;--> statement-breakpoint
-- Filled from the results already stored: every current result once under flag '' and once under each of its flags.
INSERT INTO `catalogue_bins` (`campaign_id`, `flag`, `review_status`, `chi2_class`, `teff_bin`, `lum_bin`, `n`)
	SELECT f.`campaign_id`, '', f.`review_status`, CASE WHEN f.`chi2_red` IS NULL THEN -1 WHEN f.`chi2_red` <= 1 THEN 0 WHEN f.`chi2_red` <= 2 THEN 1 WHEN f.`chi2_red` <= 3 THEN 2 WHEN f.`chi2_red` <= 5 THEN 3 WHEN f.`chi2_red` <= 10 THEN 4 ELSE 5 END, CASE WHEN f.`teff_k` IS NULL THEN -1 ELSE CAST(floor(f.`teff_k` / 100) AS INTEGER) END, CASE WHEN f.`lum_lsun` IS NULL OR f.`lum_lsun` <= 0 THEN -100000 ELSE CAST(floor(log10(f.`lum_lsun`) * 10) AS INTEGER) END, count(*)
	FROM `fit_results` f WHERE f.`is_current` = 1
	GROUP BY 1, 2, 3, 4, 5, 6;
--> statement-breakpoint
INSERT INTO `catalogue_bins` (`campaign_id`, `flag`, `review_status`, `chi2_class`, `teff_bin`, `lum_bin`, `n`)
	SELECT f.`campaign_id`, j.`value`, f.`review_status`, CASE WHEN f.`chi2_red` IS NULL THEN -1 WHEN f.`chi2_red` <= 1 THEN 0 WHEN f.`chi2_red` <= 2 THEN 1 WHEN f.`chi2_red` <= 3 THEN 2 WHEN f.`chi2_red` <= 5 THEN 3 WHEN f.`chi2_red` <= 10 THEN 4 ELSE 5 END, CASE WHEN f.`teff_k` IS NULL THEN -1 ELSE CAST(floor(f.`teff_k` / 100) AS INTEGER) END, CASE WHEN f.`lum_lsun` IS NULL OR f.`lum_lsun` <= 0 THEN -100000 ELSE CAST(floor(log10(f.`lum_lsun`) * 10) AS INTEGER) END, count(DISTINCT f.`id`)
	FROM `fit_results` f, json_each('[' || replace(json_quote(f.`flags`), ' ', '","') || ']') j
	WHERE f.`is_current` = 1 AND j.`value` <> ''
	GROUP BY 1, 2, 3, 4, 5, 6;
--> statement-breakpoint
-- A result written as current counts at once. NEW holds the values as inserted, so when another
-- trigger then makes the row not current or superseded, that UPDATE takes it out again (the update
-- trigger below), in whichever order SQLite runs the two: counts only ever move by +1 and -1.
CREATE TRIGGER `catalogue_bins_insert` AFTER INSERT ON `fit_results`
WHEN NEW.`is_current` = 1
BEGIN
	INSERT INTO `catalogue_bins` (`campaign_id`, `flag`, `review_status`, `chi2_class`, `teff_bin`, `lum_bin`, `n`)
		SELECT NEW.`campaign_id`, c.`code`, NEW.`review_status`, CASE WHEN NEW.`chi2_red` IS NULL THEN -1 WHEN NEW.`chi2_red` <= 1 THEN 0 WHEN NEW.`chi2_red` <= 2 THEN 1 WHEN NEW.`chi2_red` <= 3 THEN 2 WHEN NEW.`chi2_red` <= 5 THEN 3 WHEN NEW.`chi2_red` <= 10 THEN 4 ELSE 5 END, CASE WHEN NEW.`teff_k` IS NULL THEN -1 ELSE CAST(floor(NEW.`teff_k` / 100) AS INTEGER) END, CASE WHEN NEW.`lum_lsun` IS NULL OR NEW.`lum_lsun` <= 0 THEN -100000 ELSE CAST(floor(log10(NEW.`lum_lsun`) * 10) AS INTEGER) END, 1
		FROM (SELECT '' AS `code` UNION SELECT `value` FROM json_each('[' || replace(json_quote(NEW.`flags`), ' ', '","') || ']') WHERE `value` <> '') c WHERE true
		ON CONFLICT DO UPDATE SET `n` = `n` + excluded.`n`;
END;
--> statement-breakpoint
CREATE TRIGGER `catalogue_bins_update` AFTER UPDATE OF `is_current`, `review_status`, `teff_k`, `lum_lsun`, `chi2_red`, `flags`, `campaign_id` ON `fit_results`
WHEN OLD.`is_current` = 1 OR NEW.`is_current` = 1
BEGIN
	INSERT INTO `catalogue_bins` (`campaign_id`, `flag`, `review_status`, `chi2_class`, `teff_bin`, `lum_bin`, `n`)
		SELECT OLD.`campaign_id`, c.`code`, OLD.`review_status`, CASE WHEN OLD.`chi2_red` IS NULL THEN -1 WHEN OLD.`chi2_red` <= 1 THEN 0 WHEN OLD.`chi2_red` <= 2 THEN 1 WHEN OLD.`chi2_red` <= 3 THEN 2 WHEN OLD.`chi2_red` <= 5 THEN 3 WHEN OLD.`chi2_red` <= 10 THEN 4 ELSE 5 END, CASE WHEN OLD.`teff_k` IS NULL THEN -1 ELSE CAST(floor(OLD.`teff_k` / 100) AS INTEGER) END, CASE WHEN OLD.`lum_lsun` IS NULL OR OLD.`lum_lsun` <= 0 THEN -100000 ELSE CAST(floor(log10(OLD.`lum_lsun`) * 10) AS INTEGER) END, -1
		FROM (SELECT '' AS `code` UNION SELECT `value` FROM json_each('[' || replace(json_quote(OLD.`flags`), ' ', '","') || ']') WHERE `value` <> '') c WHERE OLD.`is_current` = 1
		ON CONFLICT DO UPDATE SET `n` = `n` + excluded.`n`;
	INSERT INTO `catalogue_bins` (`campaign_id`, `flag`, `review_status`, `chi2_class`, `teff_bin`, `lum_bin`, `n`)
		SELECT NEW.`campaign_id`, c.`code`, NEW.`review_status`, CASE WHEN NEW.`chi2_red` IS NULL THEN -1 WHEN NEW.`chi2_red` <= 1 THEN 0 WHEN NEW.`chi2_red` <= 2 THEN 1 WHEN NEW.`chi2_red` <= 3 THEN 2 WHEN NEW.`chi2_red` <= 5 THEN 3 WHEN NEW.`chi2_red` <= 10 THEN 4 ELSE 5 END, CASE WHEN NEW.`teff_k` IS NULL THEN -1 ELSE CAST(floor(NEW.`teff_k` / 100) AS INTEGER) END, CASE WHEN NEW.`lum_lsun` IS NULL OR NEW.`lum_lsun` <= 0 THEN -100000 ELSE CAST(floor(log10(NEW.`lum_lsun`) * 10) AS INTEGER) END, 1
		FROM (SELECT '' AS `code` UNION SELECT `value` FROM json_each('[' || replace(json_quote(NEW.`flags`), ' ', '","') || ']') WHERE `value` <> '') c WHERE NEW.`is_current` = 1
		ON CONFLICT DO UPDATE SET `n` = `n` + excluded.`n`;
END;
--> statement-breakpoint
CREATE TRIGGER `catalogue_bins_delete` AFTER DELETE ON `fit_results`
WHEN OLD.`is_current` = 1
BEGIN
	INSERT INTO `catalogue_bins` (`campaign_id`, `flag`, `review_status`, `chi2_class`, `teff_bin`, `lum_bin`, `n`)
		SELECT OLD.`campaign_id`, c.`code`, OLD.`review_status`, CASE WHEN OLD.`chi2_red` IS NULL THEN -1 WHEN OLD.`chi2_red` <= 1 THEN 0 WHEN OLD.`chi2_red` <= 2 THEN 1 WHEN OLD.`chi2_red` <= 3 THEN 2 WHEN OLD.`chi2_red` <= 5 THEN 3 WHEN OLD.`chi2_red` <= 10 THEN 4 ELSE 5 END, CASE WHEN OLD.`teff_k` IS NULL THEN -1 ELSE CAST(floor(OLD.`teff_k` / 100) AS INTEGER) END, CASE WHEN OLD.`lum_lsun` IS NULL OR OLD.`lum_lsun` <= 0 THEN -100000 ELSE CAST(floor(log10(OLD.`lum_lsun`) * 10) AS INTEGER) END, -1
		FROM (SELECT '' AS `code` UNION SELECT `value` FROM json_each('[' || replace(json_quote(OLD.`flags`), ' ', '","') || ']') WHERE `value` <> '') c WHERE true
		ON CONFLICT DO UPDATE SET `n` = `n` + excluded.`n`;
END;
