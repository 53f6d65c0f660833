CREATE INDEX `fit_results_batch_ok_idx` ON `fit_results` (`batch_id`,`ok`);--> statement-breakpoint
CREATE INDEX `jobs_ready_idx` ON `jobs` ("priority" desc,`id`) WHERE "jobs"."status" = 'pending';--> statement-breakpoint
CREATE INDEX `jobs_batch_finished_idx` ON `jobs` (`batch_id`,`finished_at`);