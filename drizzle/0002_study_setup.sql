CREATE TABLE `reference_sets` (
	`id` text PRIMARY KEY NOT NULL,
	`equations_id` text NOT NULL,
	`label` text NOT NULL,
	`original_name` text NOT NULL,
	`object_key` text NOT NULL,
	`sha256` text NOT NULL,
	`size_bytes` integer NOT NULL,
	`validation_json` text NOT NULL,
	`imported_by` text NOT NULL,
	`imported_at` text NOT NULL,
	FOREIGN KEY (`imported_by`) REFERENCES `users`(`id`) ON UPDATE no action ON DELETE no action
);
--> statement-breakpoint
CREATE UNIQUE INDEX `reference_sets_object_key_unique` ON `reference_sets` (`object_key`);--> statement-breakpoint
ALTER TABLE `studies` ADD `reference_set_id` text;--> statement-breakpoint
ALTER TABLE `studies` ADD `protocol_version` integer;--> statement-breakpoint
ALTER TABLE `studies` ADD `read_design` text DEFAULT 'single' NOT NULL;--> statement-breakpoint
ALTER TABLE `studies` ADD `dual_sample_fraction` real DEFAULT 0 NOT NULL;--> statement-breakpoint
ALTER TABLE `studies` ADD `blinding_json` text DEFAULT '{"readersSeeVisit":true,"readersSeeTimepoint":true,"readersSeeBronchodilator":true,"monitorsBlinded":true}' NOT NULL;--> statement-breakpoint
ALTER TABLE `studies` ADD `turnaround_hours` integer DEFAULT 48 NOT NULL;--> statement-breakpoint
ALTER TABLE `studies` ADD `updated_at` text;