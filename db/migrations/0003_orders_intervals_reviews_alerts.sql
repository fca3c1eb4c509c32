CREATE TYPE "public"."order_status" AS ENUM('open', 'fulfilled', 'aborted', 'cancelled');--> statement-breakpoint
CREATE TYPE "public"."review_kind" AS ENUM('comment', 'reviewed');--> statement-breakpoint
CREATE TYPE "public"."sample_type" AS ENUM('whole_blood', 'serum', 'plasma', 'urine', 'other');--> statement-breakpoint
CREATE TABLE "analyte_settings" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"clinic_id" uuid NOT NULL,
	"code" text NOT NULL,
	"name" text NOT NULL,
	"unit" text NOT NULL,
	"display_unit" text NOT NULL,
	"decimals" integer DEFAULT 1 NOT NULL,
	"validated_species" "species"[] DEFAULT '{}'::species[] NOT NULL,
	"species_note" text,
	"delta_absolute" double precision,
	"delta_percent" double precision,
	"delta_window_hours" double precision,
	"delta_source" text,
	"updated_by" uuid,
	"updated_at" timestamp with time zone DEFAULT now() NOT NULL,
	CONSTRAINT "analyte_settings_decimals" CHECK ("analyte_settings"."decimals" between 0 and 6)
);
--> statement-breakpoint
CREATE TABLE "lab_orders" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"clinic_id" uuid NOT NULL,
	"patient_id" uuid NOT NULL,
	"analyte" text NOT NULL,
	"instrument_id" uuid,
	"sample_type" "sample_type" NOT NULL,
	"sample_id" text,
	"kit_lot" text,
	"ordered_by" uuid NOT NULL,
	"started_by" uuid NOT NULL,
	"started_at" timestamp with time zone NOT NULL,
	"due_at" timestamp with time zone NOT NULL,
	"protocol_id" uuid,
	"stages" jsonb DEFAULT '[]'::jsonb NOT NULL,
	"status" "order_status" DEFAULT 'open' NOT NULL,
	"fulfilled_reading_id" uuid,
	"fulfilled_at" timestamp with time zone,
	"test_consumed" boolean DEFAULT false NOT NULL,
	"closed_by" uuid,
	"closed_at" timestamp with time zone,
	"close_reason" text,
	"note" text,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL,
	CONSTRAINT "lab_orders_fulfilled_has_reading" CHECK (("lab_orders"."status" = 'fulfilled') = ("lab_orders"."fulfilled_reading_id" is not null)),
	CONSTRAINT "lab_orders_due_after_start" CHECK ("lab_orders"."due_at" >= "lab_orders"."started_at")
);
--> statement-breakpoint
CREATE TABLE "reference_intervals" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"clinic_id" uuid NOT NULL,
	"analyte" text NOT NULL,
	"species" "species" NOT NULL,
	"instrument_id" uuid,
	"unit" text NOT NULL,
	"low" double precision,
	"high" double precision,
	"critical_low" double precision,
	"critical_high" double precision,
	"bands" jsonb DEFAULT '[]'::jsonb NOT NULL,
	"source" text NOT NULL,
	"updated_by" uuid,
	"updated_at" timestamp with time zone DEFAULT now() NOT NULL,
	CONSTRAINT "reference_intervals_order" CHECK ("reference_intervals"."low" is null or "reference_intervals"."high" is null or "reference_intervals"."low" <= "reference_intervals"."high"),
	CONSTRAINT "reference_intervals_critical_order" CHECK (("reference_intervals"."critical_low" is null or "reference_intervals"."low" is null or "reference_intervals"."critical_low" <= "reference_intervals"."low") and ("reference_intervals"."critical_high" is null or "reference_intervals"."high" is null or "reference_intervals"."critical_high" >= "reference_intervals"."high"))
);
--> statement-breakpoint
CREATE TABLE "result_alerts" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"clinic_id" uuid NOT NULL,
	"reading_id" uuid NOT NULL,
	"assignment_id" uuid NOT NULL,
	"patient_id" uuid NOT NULL,
	"recipient_id" uuid,
	"kind" text NOT NULL,
	"message" text NOT NULL,
	"threshold" double precision NOT NULL,
	"unit" text NOT NULL,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL,
	"acknowledged_by" uuid,
	"acknowledged_at" timestamp with time zone,
	"acknowledge_note" text,
	"withdrawn_at" timestamp with time zone,
	CONSTRAINT "result_alerts_kind" CHECK ("result_alerts"."kind" in ('critical-low', 'critical-high'))
);
--> statement-breakpoint
CREATE TABLE "result_reviews" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"clinic_id" uuid NOT NULL,
	"reading_id" uuid NOT NULL,
	"assignment_id" uuid NOT NULL,
	"reviewer_id" uuid NOT NULL,
	"kind" "review_kind" NOT NULL,
	"comment" text,
	"at" timestamp with time zone DEFAULT now() NOT NULL
);
--> statement-breakpoint
CREATE TABLE "run_protocols" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"clinic_id" uuid NOT NULL,
	"analyte" text NOT NULL,
	"instrument_id" uuid,
	"name" text NOT NULL,
	"stages" jsonb NOT NULL,
	"early_seconds" integer DEFAULT 60 NOT NULL,
	"late_seconds" integer DEFAULT 180 NOT NULL,
	"source" text NOT NULL,
	"updated_by" uuid,
	"updated_at" timestamp with time zone DEFAULT now() NOT NULL,
	CONSTRAINT "run_protocols_tolerances" CHECK ("run_protocols"."early_seconds" >= 0 and "run_protocols"."late_seconds" >= 0)
);
--> statement-breakpoint
ALTER TABLE "instruments" ADD COLUMN "channels" integer DEFAULT 1 NOT NULL;--> statement-breakpoint
ALTER TABLE "result_assignments" ADD COLUMN "order_id" uuid;--> statement-breakpoint
ALTER TABLE "analyte_settings" ADD CONSTRAINT "analyte_settings_clinic_id_clinics_id_fk" FOREIGN KEY ("clinic_id") REFERENCES "public"."clinics"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "analyte_settings" ADD CONSTRAINT "analyte_settings_updated_by_staff_users_id_fk" FOREIGN KEY ("updated_by") REFERENCES "public"."staff_users"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "lab_orders" ADD CONSTRAINT "lab_orders_clinic_id_clinics_id_fk" FOREIGN KEY ("clinic_id") REFERENCES "public"."clinics"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "lab_orders" ADD CONSTRAINT "lab_orders_patient_id_patients_id_fk" FOREIGN KEY ("patient_id") REFERENCES "public"."patients"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "lab_orders" ADD CONSTRAINT "lab_orders_instrument_id_instruments_id_fk" FOREIGN KEY ("instrument_id") REFERENCES "public"."instruments"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "lab_orders" ADD CONSTRAINT "lab_orders_ordered_by_staff_users_id_fk" FOREIGN KEY ("ordered_by") REFERENCES "public"."staff_users"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "lab_orders" ADD CONSTRAINT "lab_orders_started_by_staff_users_id_fk" FOREIGN KEY ("started_by") REFERENCES "public"."staff_users"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "lab_orders" ADD CONSTRAINT "lab_orders_protocol_id_run_protocols_id_fk" FOREIGN KEY ("protocol_id") REFERENCES "public"."run_protocols"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "lab_orders" ADD CONSTRAINT "lab_orders_fulfilled_reading_id_readings_id_fk" FOREIGN KEY ("fulfilled_reading_id") REFERENCES "public"."readings"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "lab_orders" ADD CONSTRAINT "lab_orders_closed_by_staff_users_id_fk" FOREIGN KEY ("closed_by") REFERENCES "public"."staff_users"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "reference_intervals" ADD CONSTRAINT "reference_intervals_clinic_id_clinics_id_fk" FOREIGN KEY ("clinic_id") REFERENCES "public"."clinics"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "reference_intervals" ADD CONSTRAINT "reference_intervals_instrument_id_instruments_id_fk" FOREIGN KEY ("instrument_id") REFERENCES "public"."instruments"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "reference_intervals" ADD CONSTRAINT "reference_intervals_updated_by_staff_users_id_fk" FOREIGN KEY ("updated_by") REFERENCES "public"."staff_users"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "result_alerts" ADD CONSTRAINT "result_alerts_clinic_id_clinics_id_fk" FOREIGN KEY ("clinic_id") REFERENCES "public"."clinics"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "result_alerts" ADD CONSTRAINT "result_alerts_reading_id_readings_id_fk" FOREIGN KEY ("reading_id") REFERENCES "public"."readings"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "result_alerts" ADD CONSTRAINT "result_alerts_assignment_id_result_assignments_id_fk" FOREIGN KEY ("assignment_id") REFERENCES "public"."result_assignments"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "result_alerts" ADD CONSTRAINT "result_alerts_patient_id_patients_id_fk" FOREIGN KEY ("patient_id") REFERENCES "public"."patients"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "result_alerts" ADD CONSTRAINT "result_alerts_recipient_id_staff_users_id_fk" FOREIGN KEY ("recipient_id") REFERENCES "public"."staff_users"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "result_alerts" ADD CONSTRAINT "result_alerts_acknowledged_by_staff_users_id_fk" FOREIGN KEY ("acknowledged_by") REFERENCES "public"."staff_users"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "result_reviews" ADD CONSTRAINT "result_reviews_clinic_id_clinics_id_fk" FOREIGN KEY ("clinic_id") REFERENCES "public"."clinics"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "result_reviews" ADD CONSTRAINT "result_reviews_reading_id_readings_id_fk" FOREIGN KEY ("reading_id") REFERENCES "public"."readings"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "result_reviews" ADD CONSTRAINT "result_reviews_assignment_id_result_assignments_id_fk" FOREIGN KEY ("assignment_id") REFERENCES "public"."result_assignments"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "result_reviews" ADD CONSTRAINT "result_reviews_reviewer_id_staff_users_id_fk" FOREIGN KEY ("reviewer_id") REFERENCES "public"."staff_users"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "run_protocols" ADD CONSTRAINT "run_protocols_clinic_id_clinics_id_fk" FOREIGN KEY ("clinic_id") REFERENCES "public"."clinics"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "run_protocols" ADD CONSTRAINT "run_protocols_instrument_id_instruments_id_fk" FOREIGN KEY ("instrument_id") REFERENCES "public"."instruments"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "run_protocols" ADD CONSTRAINT "run_protocols_updated_by_staff_users_id_fk" FOREIGN KEY ("updated_by") REFERENCES "public"."staff_users"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
CREATE UNIQUE INDEX "analyte_settings_clinic_code_key" ON "analyte_settings" USING btree ("clinic_id","code");--> statement-breakpoint
CREATE UNIQUE INDEX "lab_orders_fulfilled_reading_key" ON "lab_orders" USING btree ("fulfilled_reading_id");--> statement-breakpoint
CREATE INDEX "lab_orders_clinic_status_idx" ON "lab_orders" USING btree ("clinic_id","status","due_at");--> statement-breakpoint
CREATE INDEX "lab_orders_patient_idx" ON "lab_orders" USING btree ("patient_id","started_at");--> statement-breakpoint
CREATE UNIQUE INDEX "reference_intervals_key" ON "reference_intervals" USING btree ("clinic_id","analyte","species",coalesce("instrument_id", '00000000-0000-0000-0000-000000000000'::uuid));--> statement-breakpoint
CREATE UNIQUE INDEX "result_alerts_assignment_key" ON "result_alerts" USING btree ("assignment_id");--> statement-breakpoint
CREATE INDEX "result_alerts_clinic_open_idx" ON "result_alerts" USING btree ("clinic_id","acknowledged_at","created_at");--> statement-breakpoint
CREATE INDEX "result_reviews_reading_idx" ON "result_reviews" USING btree ("reading_id","at");--> statement-breakpoint
CREATE INDEX "result_reviews_assignment_idx" ON "result_reviews" USING btree ("assignment_id");--> statement-breakpoint
CREATE UNIQUE INDEX "run_protocols_clinic_analyte_instrument_key" ON "run_protocols" USING btree ("clinic_id","analyte",coalesce("instrument_id", '00000000-0000-0000-0000-000000000000'::uuid));--> statement-breakpoint
ALTER TABLE "result_assignments" ADD CONSTRAINT "result_assignments_order_id_lab_orders_id_fk" FOREIGN KEY ("order_id") REFERENCES "public"."lab_orders"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "instruments" ADD CONSTRAINT "instruments_channels_positive" CHECK ("instruments"."channels" >= 1);