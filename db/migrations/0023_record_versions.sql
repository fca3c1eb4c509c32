CREATE TABLE "record_versions" (
	"scope" text PRIMARY KEY NOT NULL,
	"version" bigint DEFAULT 0 NOT NULL
);
--> statement-breakpoint
-- A write to what a patient's results read bumps `patient:<id>` and `results:<clinic id>`.
CREATE FUNCTION "record_versions_bump"(patient uuid, clinic uuid) RETURNS void LANGUAGE sql AS $$
  INSERT INTO record_versions (scope, version)
  SELECT scope, 1 FROM unnest(ARRAY['patient:' || patient, 'results:' || clinic]) AS scope WHERE patient IS NOT NULL
  ON CONFLICT (scope) DO UPDATE SET version = record_versions.version + 1
$$;
--> statement-breakpoint
-- Row triggers with a WHEN on the patient: a reading that arrives unassigned (nearly all of a bridge's
-- batch) does not call the function at all. TG_ARGV[0] says where the row names its patient.
CREATE FUNCTION "record_versions_bump_patients"() RETURNS trigger LANGUAGE plpgsql AS $$
BEGIN
  IF TG_ARGV[0] = 'patient_id' THEN
    IF TG_OP <> 'INSERT' THEN PERFORM record_versions_bump(OLD.patient_id, OLD.clinic_id); END IF;
    IF TG_OP = 'INSERT' OR (TG_OP = 'UPDATE' AND NEW.patient_id IS DISTINCT FROM OLD.patient_id) THEN
      PERFORM record_versions_bump(NEW.patient_id, NEW.clinic_id);
    END IF;
  ELSIF TG_ARGV[0] = 'id' THEN
    PERFORM record_versions_bump(OLD.id, OLD.clinic_id);
  ELSE
    PERFORM record_versions_bump(r.patient_id, r.clinic_id) FROM readings r WHERE r.id = NEW.reading_id;
  END IF;
  RETURN NULL;
END $$;
--> statement-breakpoint
CREATE TRIGGER "record_versions_readings_insert" AFTER INSERT ON "readings" FOR EACH ROW WHEN (NEW.patient_id IS NOT NULL) EXECUTE FUNCTION record_versions_bump_patients('patient_id');--> statement-breakpoint
CREATE TRIGGER "record_versions_readings_update" AFTER UPDATE ON "readings" FOR EACH ROW WHEN (OLD.patient_id IS NOT NULL OR NEW.patient_id IS NOT NULL) EXECUTE FUNCTION record_versions_bump_patients('patient_id');--> statement-breakpoint
CREATE TRIGGER "record_versions_readings_delete" AFTER DELETE ON "readings" FOR EACH ROW WHEN (OLD.patient_id IS NOT NULL) EXECUTE FUNCTION record_versions_bump_patients('patient_id');--> statement-breakpoint
CREATE TRIGGER "record_versions_result_assignments_insert" AFTER INSERT ON "result_assignments" FOR EACH ROW WHEN (NEW.patient_id IS NOT NULL) EXECUTE FUNCTION record_versions_bump_patients('patient_id');--> statement-breakpoint
CREATE TRIGGER "record_versions_result_assignments_update" AFTER UPDATE ON "result_assignments" FOR EACH ROW WHEN (OLD.patient_id IS NOT NULL OR NEW.patient_id IS NOT NULL) EXECUTE FUNCTION record_versions_bump_patients('patient_id');--> statement-breakpoint
CREATE TRIGGER "record_versions_result_assignments_delete" AFTER DELETE ON "result_assignments" FOR EACH ROW WHEN (OLD.patient_id IS NOT NULL) EXECUTE FUNCTION record_versions_bump_patients('patient_id');--> statement-breakpoint
CREATE TRIGGER "record_versions_result_alerts_insert" AFTER INSERT ON "result_alerts" FOR EACH ROW WHEN (NEW.patient_id IS NOT NULL) EXECUTE FUNCTION record_versions_bump_patients('patient_id');--> statement-breakpoint
CREATE TRIGGER "record_versions_result_alerts_update" AFTER UPDATE ON "result_alerts" FOR EACH ROW WHEN (OLD.patient_id IS NOT NULL OR NEW.patient_id IS NOT NULL) EXECUTE FUNCTION record_versions_bump_patients('patient_id');--> statement-breakpoint
CREATE TRIGGER "record_versions_result_alerts_delete" AFTER DELETE ON "result_alerts" FOR EACH ROW WHEN (OLD.patient_id IS NOT NULL) EXECUTE FUNCTION record_versions_bump_patients('patient_id');--> statement-breakpoint
-- A new patient has no kept view yet: only changes and removals count.
CREATE TRIGGER "record_versions_patients_update" AFTER UPDATE ON "patients" FOR EACH ROW EXECUTE FUNCTION record_versions_bump_patients('id');--> statement-breakpoint
CREATE TRIGGER "record_versions_patients_delete" AFTER DELETE ON "patients" FOR EACH ROW EXECUTE FUNCTION record_versions_bump_patients('id');--> statement-breakpoint
-- Reviews and comments are append-only (0004); the reading says whose result it is.
CREATE TRIGGER "record_versions_result_reviews_insert" AFTER INSERT ON "result_reviews" FOR EACH ROW EXECUTE FUNCTION record_versions_bump_patients('reading_id');--> statement-breakpoint
-- Emptying a table (TRUNCATE has no rows to look at) makes every kept view out of date.
CREATE FUNCTION "record_versions_bump_all"() RETURNS trigger LANGUAGE plpgsql AS $$
BEGIN
  UPDATE record_versions SET version = version + 1;
  RETURN NULL;
END $$;
--> statement-breakpoint
CREATE TRIGGER "record_versions_readings_truncate" AFTER TRUNCATE ON "readings" FOR EACH STATEMENT EXECUTE FUNCTION record_versions_bump_all();--> statement-breakpoint
CREATE TRIGGER "record_versions_result_assignments_truncate" AFTER TRUNCATE ON "result_assignments" FOR EACH STATEMENT EXECUTE FUNCTION record_versions_bump_all();--> statement-breakpoint
CREATE TRIGGER "record_versions_result_alerts_truncate" AFTER TRUNCATE ON "result_alerts" FOR EACH STATEMENT EXECUTE FUNCTION record_versions_bump_all();--> statement-breakpoint
CREATE TRIGGER "record_versions_patients_truncate" AFTER TRUNCATE ON "patients" FOR EACH STATEMENT EXECUTE FUNCTION record_versions_bump_all();--> statement-breakpoint
CREATE TRIGGER "record_versions_result_reviews_truncate" AFTER TRUNCATE ON "result_reviews" FOR EACH STATEMENT EXECUTE FUNCTION record_versions_bump_all();--> statement-breakpoint
-- The clinic's set-up (intervals, analytes, instruments, kit lots, room temperatures, staff names,
-- settings) changes rarely: any write to it bumps `setup`.
CREATE FUNCTION "record_versions_bump_setup"() RETURNS trigger LANGUAGE plpgsql AS $$
BEGIN
  INSERT INTO record_versions (scope, version) VALUES ('setup', 1)
  ON CONFLICT (scope) DO UPDATE SET version = record_versions.version + 1;
  RETURN NULL;
END $$;
--> statement-breakpoint
CREATE TRIGGER "record_versions_analyte_settings" AFTER INSERT OR UPDATE OR DELETE OR TRUNCATE ON "analyte_settings" FOR EACH STATEMENT EXECUTE FUNCTION record_versions_bump_setup();--> statement-breakpoint
CREATE TRIGGER "record_versions_reference_intervals" AFTER INSERT OR UPDATE OR DELETE OR TRUNCATE ON "reference_intervals" FOR EACH STATEMENT EXECUTE FUNCTION record_versions_bump_setup();--> statement-breakpoint
CREATE TRIGGER "record_versions_clinics" AFTER INSERT OR UPDATE OR DELETE OR TRUNCATE ON "clinics" FOR EACH STATEMENT EXECUTE FUNCTION record_versions_bump_setup();--> statement-breakpoint
CREATE TRIGGER "record_versions_kit_lots" AFTER INSERT OR UPDATE OR DELETE OR TRUNCATE ON "kit_lots" FOR EACH STATEMENT EXECUTE FUNCTION record_versions_bump_setup();--> statement-breakpoint
CREATE TRIGGER "record_versions_room_temperature_logs" AFTER INSERT OR UPDATE OR DELETE OR TRUNCATE ON "room_temperature_logs" FOR EACH STATEMENT EXECUTE FUNCTION record_versions_bump_setup();--> statement-breakpoint
-- Not on every heartbeat (instruments.health) or sign-in (staff_users.last_sign_in_at): no view reads them.
-- tests/integration/view-cache.test.ts fails when a column is added here without a decision.
CREATE TRIGGER "record_versions_instruments" AFTER INSERT OR DELETE OR TRUNCATE OR UPDATE OF "id", "clinic_id", "code", "name", "analytes", "dialect", "connection", "bridge_id", "serial_number", "profile_id", "channels", "read_settings", "operating_min_c", "operating_max_c", "active", "created_at" ON "instruments" FOR EACH STATEMENT EXECUTE FUNCTION record_versions_bump_setup();--> statement-breakpoint
CREATE TRIGGER "record_versions_staff_users" AFTER INSERT OR DELETE OR TRUNCATE OR UPDATE OF "id", "clinic_id", "email", "display_name", "role", "password_hash", "active", "must_change_password", "on_duty", "created_at" ON "staff_users" FOR EACH STATEMENT EXECUTE FUNCTION record_versions_bump_setup();
