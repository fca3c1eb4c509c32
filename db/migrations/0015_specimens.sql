CREATE TABLE "specimens" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"clinic_id" uuid NOT NULL,
	"instrument_id" uuid,
	"instrument_code" text NOT NULL,
	"sample_id" text,
	"patient_ref" text,
	"received_at" timestamp with time zone NOT NULL,
	"split_from" uuid,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL
);
--> statement-breakpoint
ALTER TABLE "readings" ADD COLUMN "specimen_id" uuid;--> statement-breakpoint
ALTER TABLE "specimens" ADD CONSTRAINT "specimens_clinic_id_clinics_id_fk" FOREIGN KEY ("clinic_id") REFERENCES "public"."clinics"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "specimens" ADD CONSTRAINT "specimens_instrument_id_instruments_id_fk" FOREIGN KEY ("instrument_id") REFERENCES "public"."instruments"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "specimens" ADD CONSTRAINT "specimens_split_from_specimens_id_fk" FOREIGN KEY ("split_from") REFERENCES "public"."specimens"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
CREATE INDEX "specimens_clinic_sample_idx" ON "specimens" USING btree ("clinic_id","instrument_code",lower("sample_id"),"received_at");--> statement-breakpoint
ALTER TABLE "readings" ADD CONSTRAINT "readings_specimen_id_specimens_id_fk" FOREIGN KEY ("specimen_id") REFERENCES "public"."specimens"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
CREATE INDEX "readings_specimen_idx" ON "readings" USING btree ("specimen_id","status");--> statement-breakpoint
-- hand-written
-- Readings stored before specimens existed each become a specimen of their own (same id, so the backfill is one pass).
INSERT INTO "specimens" ("id", "clinic_id", "instrument_id", "instrument_code", "sample_id", "patient_ref", "received_at")
  SELECT "id", "clinic_id", "instrument_id", "instrument_code", "sample_id", "patient_ref", "received_at" FROM "readings" WHERE "specimen_id" IS NULL;--> statement-breakpoint
UPDATE "readings" SET "specimen_id" = "id" WHERE "specimen_id" IS NULL;
