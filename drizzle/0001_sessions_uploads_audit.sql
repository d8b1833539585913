CREATE TABLE `audit_events` (
	`sequence` integer PRIMARY KEY AUTOINCREMENT NOT NULL,
	`at` text NOT NULL,
	`user_id` text NOT NULL,
	`role` text NOT NULL,
	`study_id` text,
	`site_id` text,
	`entity` text NOT NULL,
	`entity_id` text NOT NULL,
	`action` text NOT NULL,
	`old_value` text,
	`new_value` text,
	`reason` text,
	`previous_hash` text NOT NULL,
	`hash` text NOT NULL
);
--> statement-breakpoint
CREATE INDEX `audit_events_study` ON `audit_events` (`study_id`,`sequence`);--> statement-breakpoint
CREATE INDEX `audit_events_entity` ON `audit_events` (`entity`,`entity_id`);--> statement-breakpoint
CREATE TABLE `calibration_checks` (
	`id` text PRIMARY KEY NOT NULL,
	`study_id` text NOT NULL,
	`site_id` text NOT NULL,
	`device_serial_number` text NOT NULL,
	`syringe_volume_l` real NOT NULL,
	`measured_volume_l` real NOT NULL,
	`checked_at` text NOT NULL,
	`error_percent` real NOT NULL,
	`within_tolerance` integer NOT NULL,
	`source` text NOT NULL,
	`upload_id` text,
	`entered_by` text NOT NULL,
	`entered_at` text NOT NULL,
	FOREIGN KEY (`study_id`) REFERENCES `studies`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`site_id`) REFERENCES `sites`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`upload_id`) REFERENCES `uploads`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`entered_by`) REFERENCES `users`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE INDEX `calibration_checks_site` ON `calibration_checks` (`site_id`,`checked_at`);--> statement-breakpoint
CREATE TABLE `data_locks` (
	`id` text PRIMARY KEY NOT NULL,
	`study_id` text NOT NULL,
	`scope` text NOT NULL,
	`scope_id` text NOT NULL,
	`reason` text NOT NULL,
	`locked_by` text NOT NULL,
	`locked_at` text NOT NULL,
	`unlocked_by` text,
	`unlocked_at` text,
	`unlock_reason` text,
	FOREIGN KEY (`study_id`) REFERENCES `studies`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`locked_by`) REFERENCES `users`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`unlocked_by`) REFERENCES `users`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE INDEX `data_locks_scope` ON `data_locks` (`study_id`,`scope`,`scope_id`);--> statement-breakpoint
CREATE TABLE `efforts` (
	`id` text PRIMARY KEY NOT NULL,
	`session_id` text NOT NULL,
	`upload_id` text NOT NULL,
	`effort_index` integer NOT NULL,
	`label` text NOT NULL,
	`signal` text NOT NULL,
	`sample_rate_hz` real NOT NULL,
	`sample_count` integer NOT NULL,
	`fev1_l` real,
	`fvc_l` real NOT NULL,
	`pef_l_per_s` real NOT NULL,
	`suggested_fev1_verdict` text NOT NULL,
	`suggested_fvc_verdict` text NOT NULL,
	`metrics_json` text NOT NULL,
	`findings_json` text NOT NULL,
	`verdict_reasons_json` text NOT NULL,
	FOREIGN KEY (`session_id`) REFERENCES `test_sessions`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`upload_id`) REFERENCES `uploads`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE UNIQUE INDEX `efforts_upload_index` ON `efforts` (`upload_id`,`effort_index`);--> statement-breakpoint
CREATE INDEX `efforts_session` ON `efforts` (`session_id`);--> statement-breakpoint
CREATE TABLE `subjects` (
	`id` text PRIMARY KEY NOT NULL,
	`study_id` text NOT NULL,
	`site_id` text NOT NULL,
	`code` text NOT NULL,
	`created_at` text DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ','now')) NOT NULL,
	FOREIGN KEY (`study_id`) REFERENCES `studies`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`site_id`) REFERENCES `sites`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE UNIQUE INDEX `subjects_study_code` ON `subjects` (`study_id`,`code`);--> statement-breakpoint
CREATE INDEX `subjects_site` ON `subjects` (`site_id`);--> statement-breakpoint
CREATE TABLE `test_sessions` (
	`id` text PRIMARY KEY NOT NULL,
	`study_id` text NOT NULL,
	`site_id` text NOT NULL,
	`subject_id` text NOT NULL,
	`visit_id` text NOT NULL,
	`timepoint_id` text NOT NULL,
	`bronchodilator` text NOT NULL,
	`tested_at` text NOT NULL,
	`time_zone` text NOT NULL,
	`age_years` real NOT NULL,
	`height_cm` real NOT NULL,
	`weight_kg` real,
	`sex` text NOT NULL,
	`ethnicity` text,
	`technician_code` text NOT NULL,
	`device_manufacturer` text,
	`device_model` text,
	`device_serial_number` text,
	`status` text NOT NULL,
	`rejection_reasons` text DEFAULT '[]' NOT NULL,
	`check_json` text,
	`fev1_grade` text,
	`fvc_grade` text,
	`current_upload_id` text,
	`registered_by` text NOT NULL,
	`registered_at` text NOT NULL,
	`updated_at` text NOT NULL,
	FOREIGN KEY (`study_id`) REFERENCES `studies`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`site_id`) REFERENCES `sites`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`subject_id`) REFERENCES `subjects`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`visit_id`) REFERENCES `visits`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`timepoint_id`) REFERENCES `timepoints`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`registered_by`) REFERENCES `users`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE UNIQUE INDEX `test_sessions_slot` ON `test_sessions` (`subject_id`,`visit_id`,`timepoint_id`,`bronchodilator`);--> statement-breakpoint
CREATE INDEX `test_sessions_study_site` ON `test_sessions` (`study_id`,`site_id`);--> statement-breakpoint
CREATE INDEX `test_sessions_status` ON `test_sessions` (`study_id`,`status`);--> statement-breakpoint
CREATE TABLE `timepoints` (
	`id` text PRIMARY KEY NOT NULL,
	`study_id` text NOT NULL,
	`code` text NOT NULL,
	`name` text NOT NULL,
	`ordinal` integer NOT NULL,
	FOREIGN KEY (`study_id`) REFERENCES `studies`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE UNIQUE INDEX `timepoints_study_code` ON `timepoints` (`study_id`,`code`);--> statement-breakpoint
CREATE TABLE `uploads` (
	`id` text PRIMARY KEY NOT NULL,
	`study_id` text NOT NULL,
	`session_id` text NOT NULL,
	`object_key` text NOT NULL,
	`sha256` text NOT NULL,
	`size_bytes` integer NOT NULL,
	`original_name` text NOT NULL,
	`content_type` text NOT NULL,
	`detected_format` text,
	`uploaded_by` text NOT NULL,
	`received_at` text NOT NULL,
	`outcome` text NOT NULL,
	`errors` text DEFAULT '[]' NOT NULL,
	`processed_at` text NOT NULL,
	FOREIGN KEY (`study_id`) REFERENCES `studies`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`session_id`) REFERENCES `test_sessions`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`uploaded_by`) REFERENCES `users`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE UNIQUE INDEX `uploads_object_key_unique` ON `uploads` (`object_key`);--> statement-breakpoint
CREATE UNIQUE INDEX `uploads_study_sha256` ON `uploads` (`study_id`,`sha256`);--> statement-breakpoint
CREATE INDEX `uploads_session` ON `uploads` (`session_id`);--> statement-breakpoint
CREATE TABLE `user_messages` (
	`id` text PRIMARY KEY NOT NULL,
	`user_id` text NOT NULL,
	`to_address` text NOT NULL,
	`subject` text NOT NULL,
	`body` text NOT NULL,
	`link` text,
	`created_at` text NOT NULL,
	`delivery` text NOT NULL,
	`failure` text,
	FOREIGN KEY (`user_id`) REFERENCES `users`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE INDEX `user_messages_user` ON `user_messages` (`user_id`,`created_at`);--> statement-breakpoint
CREATE TABLE `visits` (
	`id` text PRIMARY KEY NOT NULL,
	`study_id` text NOT NULL,
	`code` text NOT NULL,
	`name` text NOT NULL,
	`ordinal` integer NOT NULL,
	`day_offset` integer NOT NULL,
	`window_before_days` integer NOT NULL,
	`window_after_days` integer NOT NULL,
	FOREIGN KEY (`study_id`) REFERENCES `studies`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE UNIQUE INDEX `visits_study_code` ON `visits` (`study_id`,`code`);--> statement-breakpoint
ALTER TABLE `studies` ADD `equations_id` text DEFAULT 'ecsc-1993' NOT NULL;--> statement-breakpoint
CREATE TRIGGER `audit_events_no_update` BEFORE UPDATE ON `audit_events`
BEGIN
  SELECT RAISE(ABORT, 'The audit trail is append-only: rows cannot be changed.');
END;
--> statement-breakpoint
CREATE TRIGGER `audit_events_no_delete` BEFORE DELETE ON `audit_events`
BEGIN
  SELECT RAISE(ABORT, 'The audit trail is append-only: rows cannot be deleted.');
END;
