ALTER TABLE `stars` ADD `lum_class` text;--> statement-breakpoint
ALTER TABLE `stars` ADD `feh_dex` real;--> statement-breakpoint
ALTER TABLE `fit_results` ADD `tbb_k` real;--> statement-breakpoint
ALTER TABLE `fit_results` ADD `tbb_err_k` real;--> statement-breakpoint
ALTER TABLE `fit_results` ADD `tbb_err_formal_k` real;--> statement-breakpoint
ALTER TABLE `fit_results` ADD `tbb_lower_k` real;--> statement-breakpoint
ALTER TABLE `fit_results` ADD `tbb_chi2_red` real;--> statement-breakpoint
ALTER TABLE `fit_results` ADD `tbb_model_fluxes` text;--> statement-breakpoint
ALTER TABLE `fit_results` ADD `lum_class` text;--> statement-breakpoint
ALTER TABLE `fit_results` ADD `lum_class_source` text;--> statement-breakpoint
ALTER TABLE `fit_results` ADD `feh_dex` real;--> statement-breakpoint
ALTER TABLE `fit_results` ADD `photosphere_name` text;--> statement-breakpoint
ALTER TABLE `fit_results` ADD `photosphere_version` text;--> statement-breakpoint
CREATE INDEX `fit_results_current_tbb_idx` ON `fit_results` (`campaign_id`,`tbb_k`) WHERE is_current = 1;--> statement-breakpoint
-- Every fit stored so far was a pure Planck fit: its numbers are kept as the Planck results, and its
-- model curve (detail.modelFluxesCgs, Planck band means) becomes the Planck curve. photosphere_name
-- stays null (made without the photosphere model) until the star is re-fitted; teff_k keeps the same
-- number, which is what a Planck-only fit reports there too.
UPDATE `fit_results` SET
	`tbb_k` = `teff_k`,
	`tbb_err_k` = `teff_err_k`,
	`tbb_err_formal_k` = `teff_err_formal_k`,
	`tbb_lower_k` = `teff_lower_k`,
	`tbb_chi2_red` = `chi2_red`,
	`tbb_model_fluxes` = CASE WHEN json_valid(`detail`) AND json_type(`detail`, '$.modelFluxesCgs') = 'object'
		THEN json_extract(`detail`, '$.modelFluxesCgs') END
	WHERE `ok` = 1;
