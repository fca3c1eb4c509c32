DROP INDEX "readings_specimen_idx";--> statement-breakpoint
CREATE INDEX "specimens_message_idx" ON "specimens" USING btree ("clinic_id","instrument_code","received_at") WHERE "specimens"."sample_id" is null and "specimens"."split_from" is null;--> statement-breakpoint
CREATE INDEX "readings_specimen_idx" ON "readings" USING btree ("specimen_id","measured_at");