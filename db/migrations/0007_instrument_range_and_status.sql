ALTER TABLE "readings" ADD COLUMN "instrument_range" text;--> statement-breakpoint
ALTER TABLE "readings" ADD COLUMN "result_status" text;