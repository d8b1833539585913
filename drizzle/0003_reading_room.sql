CREATE TABLE `queries` (
	`id` text PRIMARY KEY NOT NULL,
	`study_id` text NOT NULL,
	`site_id` text NOT NULL,
	`session_id` text NOT NULL,
	`read_id` text,
	`opened_by` text NOT NULL,
	`opened_role` text NOT NULL,
	`question` text NOT NULL,
	`request_repeat` integer DEFAULT false NOT NULL,
	`status` text NOT NULL,
	`opened_at` text NOT NULL,
	`closed_at` text,
	`closed_by` text,
	FOREIGN KEY (`study_id`) REFERENCES `studies`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`site_id`) REFERENCES `sites`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`session_id`) REFERENCES `test_sessions`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`read_id`) REFERENCES `reads`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`opened_by`) REFERENCES `users`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`closed_by`) REFERENCES `users`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE INDEX `queries_session` ON `queries` (`session_id`);--> statement-breakpoint
CREATE INDEX `queries_study_status` ON `queries` (`study_id`,`status`);--> statement-breakpoint
CREATE TABLE `query_messages` (
	`id` text PRIMARY KEY NOT NULL,
	`query_id` text NOT NULL,
	`author_id` text NOT NULL,
	`author_role` text NOT NULL,
	`body` text NOT NULL,
	`created_at` text NOT NULL,
	FOREIGN KEY (`query_id`) REFERENCES `queries`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`author_id`) REFERENCES `users`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE INDEX `query_messages_query` ON `query_messages` (`query_id`,`created_at`);--> statement-breakpoint
CREATE TABLE `read_verdicts` (
	`read_id` text NOT NULL,
	`effort_id` text NOT NULL,
	`effort_index` integer NOT NULL,
	`fev1_verdict` text NOT NULL,
	`fvc_verdict` text NOT NULL,
	`suggested_fev1_verdict` text NOT NULL,
	`suggested_fvc_verdict` text NOT NULL,
	`findings_json` text DEFAULT '[]' NOT NULL,
	`comment` text DEFAULT '' NOT NULL,
	FOREIGN KEY (`read_id`) REFERENCES `reads`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`effort_id`) REFERENCES `efforts`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE UNIQUE INDEX `read_verdicts_read_effort` ON `read_verdicts` (`read_id`,`effort_index`);--> statement-breakpoint
CREATE TABLE `reads` (
	`id` text PRIMARY KEY NOT NULL,
	`study_id` text NOT NULL,
	`session_id` text NOT NULL,
	`upload_id` text NOT NULL,
	`reader_id` text NOT NULL,
	`kind` text NOT NULL,
	`blind_code` text NOT NULL,
	`status` text NOT NULL,
	`version` integer DEFAULT 1 NOT NULL,
	`claimed_at` text NOT NULL,
	`due_at` text NOT NULL,
	`updated_at` text NOT NULL,
	`selection_json` text DEFAULT '{}' NOT NULL,
	`feedback_text` text DEFAULT '' NOT NULL,
	`result_json` text,
	`signature_id` text,
	`signed_at` text,
	FOREIGN KEY (`study_id`) REFERENCES `studies`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`session_id`) REFERENCES `test_sessions`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`upload_id`) REFERENCES `uploads`(`id`) ON UPDATE no action ON DELETE no action,
	FOREIGN KEY (`reader_id`) REFERENCES `users`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE UNIQUE INDEX `reads_blind_code_unique` ON `reads` (`blind_code`);--> statement-breakpoint
CREATE INDEX `reads_session` ON `reads` (`session_id`);--> statement-breakpoint
CREATE INDEX `reads_reader` ON `reads` (`reader_id`,`status`);--> statement-breakpoint
CREATE TABLE `signatures` (
	`id` text PRIMARY KEY NOT NULL,
	`user_id` text NOT NULL,
	`printed_name` text NOT NULL,
	`meaning` text NOT NULL,
	`signed_at` text NOT NULL,
	`record_type` text NOT NULL,
	`record_id` text NOT NULL,
	`content_hash` text NOT NULL,
	`auth_time` text NOT NULL,
	`method` text NOT NULL,
	FOREIGN KEY (`user_id`) REFERENCES `users`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE INDEX `signatures_record` ON `signatures` (`record_type`,`record_id`);--> statement-breakpoint
ALTER TABLE `test_sessions` ADD `dual_read` integer DEFAULT false NOT NULL;--> statement-breakpoint
ALTER TABLE `test_sessions` ADD `feedback_released_at` text;