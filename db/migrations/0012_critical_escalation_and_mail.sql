CREATE TYPE "public"."mail_status" AS ENUM('queued', 'sent', 'failed');--> statement-breakpoint
CREATE TABLE "outbound_mail" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"clinic_id" uuid NOT NULL,
	"purpose" text NOT NULL,
	"to_addresses" text[] NOT NULL,
	"subject" text NOT NULL,
	"text_body" text NOT NULL,
	"html_body" text,
	"attachments" jsonb DEFAULT '[]'::jsonb NOT NULL,
	"status" "mail_status" DEFAULT 'queued' NOT NULL,
	"attempts" integer DEFAULT 0 NOT NULL,
	"max_attempts" integer DEFAULT 6 NOT NULL,
	"next_attempt_at" timestamp with time zone DEFAULT now() NOT NULL,
	"last_error" text,
	"last_attempt_at" timestamp with time zone,
	"sent_at" timestamp with time zone,
	"message_id" text,
	"patient_id" uuid,
	"created_by" uuid,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL,
	CONSTRAINT "outbound_mail_has_recipient" CHECK (cardinality("outbound_mail"."to_addresses") > 0)
);
--> statement-breakpoint
CREATE TABLE "result_reports" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"clinic_id" uuid NOT NULL,
	"patient_id" uuid NOT NULL,
	"visit_date" date NOT NULL,
	"reading_ids" uuid[] NOT NULL,
	"recipient_kind" text NOT NULL,
	"recipient_name" text,
	"recipient_email" text NOT NULL,
	"message" text,
	"mail_id" uuid NOT NULL,
	"sent_by" uuid NOT NULL,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL,
	CONSTRAINT "result_reports_recipient_kind" CHECK ("result_reports"."recipient_kind" in ('owner', 'referring-vet'))
);
--> statement-breakpoint
ALTER TABLE "result_alerts" ADD COLUMN "escalated_at" timestamp with time zone;--> statement-breakpoint
ALTER TABLE "result_alerts" ADD COLUMN "escalation_mail_id" uuid;--> statement-breakpoint
ALTER TABLE "staff_users" ADD COLUMN "on_duty" boolean DEFAULT true NOT NULL;--> statement-breakpoint
ALTER TABLE "outbound_mail" ADD CONSTRAINT "outbound_mail_clinic_id_clinics_id_fk" FOREIGN KEY ("clinic_id") REFERENCES "public"."clinics"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "outbound_mail" ADD CONSTRAINT "outbound_mail_patient_id_patients_id_fk" FOREIGN KEY ("patient_id") REFERENCES "public"."patients"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "outbound_mail" ADD CONSTRAINT "outbound_mail_created_by_staff_users_id_fk" FOREIGN KEY ("created_by") REFERENCES "public"."staff_users"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "result_reports" ADD CONSTRAINT "result_reports_clinic_id_clinics_id_fk" FOREIGN KEY ("clinic_id") REFERENCES "public"."clinics"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "result_reports" ADD CONSTRAINT "result_reports_patient_id_patients_id_fk" FOREIGN KEY ("patient_id") REFERENCES "public"."patients"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "result_reports" ADD CONSTRAINT "result_reports_mail_id_outbound_mail_id_fk" FOREIGN KEY ("mail_id") REFERENCES "public"."outbound_mail"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "result_reports" ADD CONSTRAINT "result_reports_sent_by_staff_users_id_fk" FOREIGN KEY ("sent_by") REFERENCES "public"."staff_users"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
CREATE INDEX "outbound_mail_due_idx" ON "outbound_mail" USING btree ("status","next_attempt_at");--> statement-breakpoint
CREATE INDEX "outbound_mail_patient_idx" ON "outbound_mail" USING btree ("patient_id","created_at");--> statement-breakpoint
CREATE INDEX "result_reports_patient_idx" ON "result_reports" USING btree ("patient_id","created_at");--> statement-breakpoint
ALTER TABLE "result_alerts" ADD CONSTRAINT "result_alerts_escalation_mail_id_outbound_mail_id_fk" FOREIGN KEY ("escalation_mail_id") REFERENCES "public"."outbound_mail"("id") ON DELETE set null ON UPDATE no action;