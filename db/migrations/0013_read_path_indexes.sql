ALTER TABLE "result_assignments" ADD COLUMN "reviewed_at" timestamp with time zone;--> statement-breakpoint
CREATE INDEX "patients_clinic_record_lower_idx" ON "patients" USING btree ("clinic_id",lower("record_number"));--> statement-breakpoint
CREATE INDEX "result_assignments_unreviewed_idx" ON "result_assignments" USING btree ("clinic_id","assigned_at") WHERE "result_assignments"."ended_at" is null and "result_assignments"."reviewed_at" is null;--> statement-breakpoint
-- hand-written
-- reviewed_at follows the first 'reviewed' row of result_reviews (append-only), whoever inserts it.
UPDATE "result_assignments" a SET "reviewed_at" = r.first_at
  FROM (SELECT "assignment_id", min("at") AS first_at FROM "result_reviews" WHERE "kind" = 'reviewed' GROUP BY "assignment_id") r
  WHERE r."assignment_id" = a."id";--> statement-breakpoint
CREATE FUNCTION "result_assignments_mark_reviewed"() RETURNS trigger LANGUAGE plpgsql AS $$
BEGIN
  UPDATE "result_assignments" SET "reviewed_at" = NEW."at" WHERE "id" = NEW."assignment_id" AND "reviewed_at" IS NULL;
  RETURN NEW;
END $$;--> statement-breakpoint
CREATE TRIGGER "result_reviews_mark_reviewed" AFTER INSERT ON "result_reviews"
  FOR EACH ROW WHEN (NEW."kind" = 'reviewed') EXECUTE FUNCTION "result_assignments_mark_reviewed"();
--> statement-breakpoint
CREATE EXTENSION IF NOT EXISTS pg_trgm;--> statement-breakpoint
CREATE INDEX "patients_name_trgm_idx" ON "patients" USING gin ("name" gin_trgm_ops);--> statement-breakpoint
CREATE INDEX "patients_record_trgm_idx" ON "patients" USING gin ("record_number" gin_trgm_ops);--> statement-breakpoint
CREATE INDEX "owners_name_trgm_idx" ON "owners" USING gin ("name" gin_trgm_ops);
