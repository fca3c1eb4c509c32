CREATE TABLE "printout_profiles" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"clinic_id" uuid NOT NULL,
	"profile_key" uuid NOT NULL,
	"name" text NOT NULL,
	"version" bigint NOT NULL,
	"definition" jsonb NOT NULL,
	"created_by" uuid,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL
);
--> statement-breakpoint
ALTER TABLE "instruments" ADD COLUMN "profile_id" uuid;--> statement-breakpoint
ALTER TABLE "instruments" ADD COLUMN "health" jsonb;--> statement-breakpoint
ALTER TABLE "unparsed_captures" ADD COLUMN "handled_by" uuid;--> statement-breakpoint
ALTER TABLE "unparsed_captures" ADD COLUMN "handled_at" timestamp with time zone;--> statement-breakpoint
ALTER TABLE "unparsed_captures" ADD COLUMN "handling_note" text;--> statement-breakpoint
ALTER TABLE "unparsed_captures" ADD COLUMN "transcribed_reading_id" uuid;--> statement-breakpoint
ALTER TABLE "printout_profiles" ADD CONSTRAINT "printout_profiles_clinic_id_clinics_id_fk" FOREIGN KEY ("clinic_id") REFERENCES "public"."clinics"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "printout_profiles" ADD CONSTRAINT "printout_profiles_created_by_staff_users_id_fk" FOREIGN KEY ("created_by") REFERENCES "public"."staff_users"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
CREATE UNIQUE INDEX "printout_profiles_key_version" ON "printout_profiles" USING btree ("profile_key","version");--> statement-breakpoint
CREATE INDEX "printout_profiles_clinic_idx" ON "printout_profiles" USING btree ("clinic_id");--> statement-breakpoint
ALTER TABLE "unparsed_captures" ADD CONSTRAINT "unparsed_captures_handled_by_staff_users_id_fk" FOREIGN KEY ("handled_by") REFERENCES "public"."staff_users"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "unparsed_captures" ADD CONSTRAINT "unparsed_captures_transcribed_reading_id_readings_id_fk" FOREIGN KEY ("transcribed_reading_id") REFERENCES "public"."readings"("id") ON DELETE restrict ON UPDATE no action;