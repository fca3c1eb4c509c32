CREATE TYPE "public"."capture_status" AS ENUM('open', 'transcribed', 'dismissed');--> statement-breakpoint
CREATE TYPE "public"."patient_sex" AS ENUM('male', 'male_neutered', 'female', 'female_spayed', 'unknown');--> statement-breakpoint
CREATE TYPE "public"."reading_status" AS ENUM('unassigned', 'assigned', 'voided');--> statement-breakpoint
CREATE TYPE "public"."species" AS ENUM('dog', 'cat', 'rabbit', 'ferret', 'bird', 'reptile', 'other');--> statement-breakpoint
CREATE TYPE "public"."staff_role" AS ENUM('admin', 'veterinarian', 'technician');--> statement-breakpoint
CREATE TABLE "audit_events" (
	"id" bigint PRIMARY KEY GENERATED ALWAYS AS IDENTITY (sequence name "audit_events_id_seq" INCREMENT BY 1 MINVALUE 1 MAXVALUE 9223372036854775807 START WITH 1 CACHE 1),
	"clinic_id" uuid NOT NULL,
	"at" timestamp with time zone DEFAULT now() NOT NULL,
	"actor_user_id" uuid,
	"actor_bridge_id" uuid,
	"action" text NOT NULL,
	"entity_type" text NOT NULL,
	"entity_id" text NOT NULL,
	"details" jsonb DEFAULT '{}'::jsonb NOT NULL
);
--> statement-breakpoint
CREATE TABLE "bridges" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"clinic_id" uuid NOT NULL,
	"name" text NOT NULL,
	"token_hash" text NOT NULL,
	"token_hint" text NOT NULL,
	"created_by" uuid,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL,
	"revoked_at" timestamp with time zone,
	"last_seen_at" timestamp with time zone,
	"last_heartbeat" jsonb
);
--> statement-breakpoint
CREATE TABLE "clinics" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"name" text NOT NULL,
	"time_zone" text DEFAULT 'UTC' NOT NULL,
	"settings" jsonb DEFAULT '{}'::jsonb NOT NULL,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL
);
--> statement-breakpoint
CREATE TABLE "instruments" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"clinic_id" uuid NOT NULL,
	"code" text NOT NULL,
	"name" text NOT NULL,
	"analytes" text[] DEFAULT '{}'::text[] NOT NULL,
	"dialect" text NOT NULL,
	"connection" jsonb,
	"bridge_id" uuid,
	"serial_number" text,
	"active" boolean DEFAULT true NOT NULL,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL
);
--> statement-breakpoint
CREATE TABLE "owners" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"clinic_id" uuid NOT NULL,
	"name" text NOT NULL,
	"phone" text,
	"email" text,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL
);
--> statement-breakpoint
CREATE TABLE "patients" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"clinic_id" uuid NOT NULL,
	"record_number" text NOT NULL,
	"name" text NOT NULL,
	"species" "species" NOT NULL,
	"breed" text,
	"sex" "patient_sex" DEFAULT 'unknown' NOT NULL,
	"date_of_birth" date,
	"weight_kg" double precision,
	"owner_id" uuid,
	"attending_vet_id" uuid,
	"active" boolean DEFAULT true NOT NULL,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL,
	CONSTRAINT "patients_weight_positive" CHECK ("patients"."weight_kg" is null or "patients"."weight_kg" > 0)
);
--> statement-breakpoint
CREATE TABLE "readings" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"clinic_id" uuid NOT NULL,
	"bridge_id" uuid NOT NULL,
	"idempotency_key" text NOT NULL,
	"instrument_id" uuid,
	"instrument_code" text NOT NULL,
	"instrument_serial" text,
	"analyte" text NOT NULL,
	"value" double precision,
	"comparator" text,
	"unit" text,
	"flags" text[] DEFAULT '{}'::text[] NOT NULL,
	"sample_id" text,
	"patient_ref" text,
	"measured_at" timestamp with time zone,
	"received_at" timestamp with time zone NOT NULL,
	"stored_at" timestamp with time zone DEFAULT now() NOT NULL,
	"raw" text NOT NULL,
	"status" "reading_status" DEFAULT 'unassigned' NOT NULL,
	"patient_id" uuid,
	CONSTRAINT "readings_comparator_valid" CHECK ("readings"."comparator" is null or "readings"."comparator" in ('<', '>')),
	CONSTRAINT "readings_assigned_has_patient" CHECK (("readings"."status" = 'assigned') = ("readings"."patient_id" is not null))
);
--> statement-breakpoint
CREATE TABLE "result_assignments" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"clinic_id" uuid NOT NULL,
	"reading_id" uuid NOT NULL,
	"patient_id" uuid NOT NULL,
	"assigned_by" uuid NOT NULL,
	"assigned_at" timestamp with time zone DEFAULT now() NOT NULL,
	"method" text DEFAULT 'manual' NOT NULL,
	"ended_at" timestamp with time zone,
	"ended_by" uuid,
	"end_reason" text
);
--> statement-breakpoint
CREATE TABLE "staff_users" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"clinic_id" uuid NOT NULL,
	"email" text NOT NULL,
	"display_name" text NOT NULL,
	"role" "staff_role" NOT NULL,
	"password_hash" text NOT NULL,
	"active" boolean DEFAULT true NOT NULL,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL,
	"last_sign_in_at" timestamp with time zone
);
--> statement-breakpoint
CREATE TABLE "unparsed_captures" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"clinic_id" uuid NOT NULL,
	"bridge_id" uuid NOT NULL,
	"idempotency_key" text NOT NULL,
	"instrument_id" uuid,
	"instrument_code" text NOT NULL,
	"raw" text NOT NULL,
	"reason" text NOT NULL,
	"received_at" timestamp with time zone NOT NULL,
	"stored_at" timestamp with time zone DEFAULT now() NOT NULL,
	"status" "capture_status" DEFAULT 'open' NOT NULL
);
--> statement-breakpoint
ALTER TABLE "audit_events" ADD CONSTRAINT "audit_events_clinic_id_clinics_id_fk" FOREIGN KEY ("clinic_id") REFERENCES "public"."clinics"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "audit_events" ADD CONSTRAINT "audit_events_actor_user_id_staff_users_id_fk" FOREIGN KEY ("actor_user_id") REFERENCES "public"."staff_users"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "audit_events" ADD CONSTRAINT "audit_events_actor_bridge_id_bridges_id_fk" FOREIGN KEY ("actor_bridge_id") REFERENCES "public"."bridges"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "bridges" ADD CONSTRAINT "bridges_clinic_id_clinics_id_fk" FOREIGN KEY ("clinic_id") REFERENCES "public"."clinics"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "bridges" ADD CONSTRAINT "bridges_created_by_staff_users_id_fk" FOREIGN KEY ("created_by") REFERENCES "public"."staff_users"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "instruments" ADD CONSTRAINT "instruments_clinic_id_clinics_id_fk" FOREIGN KEY ("clinic_id") REFERENCES "public"."clinics"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "instruments" ADD CONSTRAINT "instruments_bridge_id_bridges_id_fk" FOREIGN KEY ("bridge_id") REFERENCES "public"."bridges"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "owners" ADD CONSTRAINT "owners_clinic_id_clinics_id_fk" FOREIGN KEY ("clinic_id") REFERENCES "public"."clinics"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "patients" ADD CONSTRAINT "patients_clinic_id_clinics_id_fk" FOREIGN KEY ("clinic_id") REFERENCES "public"."clinics"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "patients" ADD CONSTRAINT "patients_owner_id_owners_id_fk" FOREIGN KEY ("owner_id") REFERENCES "public"."owners"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "patients" ADD CONSTRAINT "patients_attending_vet_id_staff_users_id_fk" FOREIGN KEY ("attending_vet_id") REFERENCES "public"."staff_users"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "readings" ADD CONSTRAINT "readings_clinic_id_clinics_id_fk" FOREIGN KEY ("clinic_id") REFERENCES "public"."clinics"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "readings" ADD CONSTRAINT "readings_bridge_id_bridges_id_fk" FOREIGN KEY ("bridge_id") REFERENCES "public"."bridges"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "readings" ADD CONSTRAINT "readings_instrument_id_instruments_id_fk" FOREIGN KEY ("instrument_id") REFERENCES "public"."instruments"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "readings" ADD CONSTRAINT "readings_patient_id_patients_id_fk" FOREIGN KEY ("patient_id") REFERENCES "public"."patients"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "result_assignments" ADD CONSTRAINT "result_assignments_clinic_id_clinics_id_fk" FOREIGN KEY ("clinic_id") REFERENCES "public"."clinics"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "result_assignments" ADD CONSTRAINT "result_assignments_reading_id_readings_id_fk" FOREIGN KEY ("reading_id") REFERENCES "public"."readings"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "result_assignments" ADD CONSTRAINT "result_assignments_patient_id_patients_id_fk" FOREIGN KEY ("patient_id") REFERENCES "public"."patients"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "result_assignments" ADD CONSTRAINT "result_assignments_assigned_by_staff_users_id_fk" FOREIGN KEY ("assigned_by") REFERENCES "public"."staff_users"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "result_assignments" ADD CONSTRAINT "result_assignments_ended_by_staff_users_id_fk" FOREIGN KEY ("ended_by") REFERENCES "public"."staff_users"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "staff_users" ADD CONSTRAINT "staff_users_clinic_id_clinics_id_fk" FOREIGN KEY ("clinic_id") REFERENCES "public"."clinics"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "unparsed_captures" ADD CONSTRAINT "unparsed_captures_clinic_id_clinics_id_fk" FOREIGN KEY ("clinic_id") REFERENCES "public"."clinics"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "unparsed_captures" ADD CONSTRAINT "unparsed_captures_bridge_id_bridges_id_fk" FOREIGN KEY ("bridge_id") REFERENCES "public"."bridges"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "unparsed_captures" ADD CONSTRAINT "unparsed_captures_instrument_id_instruments_id_fk" FOREIGN KEY ("instrument_id") REFERENCES "public"."instruments"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
CREATE INDEX "audit_events_entity_idx" ON "audit_events" USING btree ("entity_type","entity_id","at");--> statement-breakpoint
CREATE INDEX "audit_events_clinic_idx" ON "audit_events" USING btree ("clinic_id","at");--> statement-breakpoint
CREATE UNIQUE INDEX "bridges_token_hash_key" ON "bridges" USING btree ("token_hash");--> statement-breakpoint
CREATE INDEX "bridges_clinic_idx" ON "bridges" USING btree ("clinic_id");--> statement-breakpoint
CREATE UNIQUE INDEX "instruments_clinic_code_key" ON "instruments" USING btree ("clinic_id","code");--> statement-breakpoint
CREATE INDEX "owners_clinic_idx" ON "owners" USING btree ("clinic_id");--> statement-breakpoint
CREATE UNIQUE INDEX "patients_clinic_record_key" ON "patients" USING btree ("clinic_id","record_number");--> statement-breakpoint
CREATE INDEX "patients_clinic_name_idx" ON "patients" USING btree ("clinic_id",lower("name"));--> statement-breakpoint
CREATE UNIQUE INDEX "readings_bridge_key" ON "readings" USING btree ("bridge_id","idempotency_key");--> statement-breakpoint
CREATE INDEX "readings_clinic_status_idx" ON "readings" USING btree ("clinic_id","status","received_at");--> statement-breakpoint
CREATE INDEX "readings_patient_idx" ON "readings" USING btree ("patient_id","measured_at");--> statement-breakpoint
CREATE UNIQUE INDEX "result_assignments_one_current" ON "result_assignments" USING btree ("reading_id") WHERE "result_assignments"."ended_at" is null;--> statement-breakpoint
CREATE INDEX "result_assignments_patient_idx" ON "result_assignments" USING btree ("patient_id");--> statement-breakpoint
CREATE UNIQUE INDEX "staff_users_email_key" ON "staff_users" USING btree (lower("email"));--> statement-breakpoint
CREATE INDEX "staff_users_clinic_idx" ON "staff_users" USING btree ("clinic_id");--> statement-breakpoint
CREATE UNIQUE INDEX "unparsed_captures_bridge_key" ON "unparsed_captures" USING btree ("bridge_id","idempotency_key");--> statement-breakpoint
CREATE INDEX "unparsed_captures_clinic_status_idx" ON "unparsed_captures" USING btree ("clinic_id","status","received_at");