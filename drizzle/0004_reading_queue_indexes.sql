DROP INDEX `test_sessions_status`;--> statement-breakpoint
CREATE INDEX `test_sessions_visit` ON `test_sessions` (`visit_id`);--> statement-breakpoint
CREATE INDEX `test_sessions_status` ON `test_sessions` (`study_id`,`status`,`current_upload_id`);--> statement-breakpoint
CREATE INDEX `reads_live_over_reads` ON `reads` (`study_id`,`session_id`,`reader_id`) WHERE "reads"."kind" <> 'adjudication' and "reads"."status" <> 'withdrawn';--> statement-breakpoint
CREATE INDEX `uploads_study_processed` ON `uploads` (`study_id`,`processed_at`,`session_id`);