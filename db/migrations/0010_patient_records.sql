CREATE TYPE "public"."patient_status" AS ENUM('active', 'deceased', 'archived', 'merged');--> statement-breakpoint
ALTER TABLE "patients" ADD COLUMN "date_of_birth_estimated" boolean DEFAULT false NOT NULL;--> statement-breakpoint
ALTER TABLE "patients" ADD COLUMN "weight_measured_on" date;--> statement-breakpoint
ALTER TABLE "patients" ADD COLUMN "status" "patient_status" DEFAULT 'active' NOT NULL;--> statement-breakpoint
ALTER TABLE "patients" ADD COLUMN "deceased_on" date;--> statement-breakpoint
ALTER TABLE "patients" ADD COLUMN "merged_into_id" uuid;--> statement-breakpoint
ALTER TABLE "patients" ADD COLUMN "updated_at" timestamp with time zone;--> statement-breakpoint
ALTER TABLE "staff_users" ADD COLUMN "must_change_password" boolean DEFAULT false NOT NULL;--> statement-breakpoint
ALTER TABLE "patients" ADD CONSTRAINT "patients_merged_into_id_patients_id_fk" FOREIGN KEY ("merged_into_id") REFERENCES "public"."patients"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
CREATE INDEX "audit_events_patient_idx" ON "audit_events" USING btree ("clinic_id",("details" ->> 'patientId'));--> statement-breakpoint
CREATE INDEX "patients_owner_idx" ON "patients" USING btree ("owner_id");--> statement-breakpoint
-- hand-written
-- Records closed before status existed were closed for an unknown reason: keep them closed, as archived.
UPDATE "patients" SET "status" = 'archived' WHERE "active" = false AND "status" = 'active';
--> statement-breakpoint
-- Code that only knows "active" (an insert with active = false) still gets a consistent row.
CREATE OR REPLACE FUNCTION patients_status_from_active() RETURNS trigger AS $$
BEGIN
  IF NEW.active = false AND NEW.status = 'active' THEN
    NEW.status := 'archived';
  END IF;
  RETURN NEW;
END;
$$ LANGUAGE plpgsql;
--> statement-breakpoint
CREATE TRIGGER patients_status_from_active
  BEFORE INSERT ON patients
  FOR EACH ROW EXECUTE FUNCTION patients_status_from_active();
--> statement-breakpoint
ALTER TABLE "patients" ADD CONSTRAINT "patients_active_status" CHECK ("active" = ("status" = 'active'));
--> statement-breakpoint
ALTER TABLE "patients" ADD CONSTRAINT "patients_merged_target" CHECK (("status" = 'merged') = ("merged_into_id" IS NOT NULL));
