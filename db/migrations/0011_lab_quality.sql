ALTER TYPE "public"."reading_status" ADD VALUE 'control';--> statement-breakpoint
CREATE TABLE "control_materials" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"clinic_id" uuid NOT NULL,
	"analyte" text NOT NULL,
	"instrument_id" uuid,
	"name" text NOT NULL,
	"lot_number" text NOT NULL,
	"level" text NOT NULL,
	"sample_id" text,
	"unit" text NOT NULL,
	"target_mean" double precision NOT NULL,
	"target_sd" double precision NOT NULL,
	"target_source" text NOT NULL,
	"expires_on" date,
	"active" boolean DEFAULT true NOT NULL,
	"created_by" uuid,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL,
	CONSTRAINT "control_materials_sd_positive" CHECK ("control_materials"."target_sd" > 0),
	CONSTRAINT "control_materials_target_source" CHECK ("control_materials"."target_source" in ('insert', 'established'))
);
--> statement-breakpoint
CREATE TABLE "interval_verifications" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"clinic_id" uuid NOT NULL,
	"interval_id" uuid,
	"analyte" text NOT NULL,
	"species" "species" NOT NULL,
	"unit" text NOT NULL,
	"low" double precision,
	"high" double precision,
	"interval_source" text NOT NULL,
	"values" double precision[] NOT NULL,
	"second_values" double precision[],
	"decision" text NOT NULL,
	"note" text,
	"performed_by" uuid NOT NULL,
	"performed_at" timestamp with time zone DEFAULT now() NOT NULL
);
--> statement-breakpoint
CREATE TABLE "kit_lots" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"clinic_id" uuid NOT NULL,
	"analyte" text NOT NULL,
	"lot_number" text NOT NULL,
	"expires_on" date NOT NULL,
	"tests_per_kit" integer NOT NULL,
	"kits" integer DEFAULT 1 NOT NULL,
	"opened_on" date,
	"storage_notes" text,
	"instrument_id" uuid,
	"low_at" integer DEFAULT 5 NOT NULL,
	"finished_at" timestamp with time zone,
	"created_by" uuid,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL,
	CONSTRAINT "kit_lots_counts_positive" CHECK ("kit_lots"."tests_per_kit" >= 1 and "kit_lots"."kits" >= 1 and "kit_lots"."low_at" >= 0)
);
--> statement-breakpoint
CREATE TABLE "quality_goals" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"clinic_id" uuid NOT NULL,
	"analyte" text NOT NULL,
	"tea_percent" double precision NOT NULL,
	"source" text NOT NULL,
	"updated_by" uuid,
	"updated_at" timestamp with time zone DEFAULT now() NOT NULL,
	CONSTRAINT "quality_goals_tea_positive" CHECK ("quality_goals"."tea_percent" > 0)
);
--> statement-breakpoint
CREATE TABLE "room_temperature_logs" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"clinic_id" uuid NOT NULL,
	"day" date NOT NULL,
	"temperature_c" double precision NOT NULL,
	"note" text,
	"recorded_by" uuid NOT NULL,
	"recorded_at" timestamp with time zone DEFAULT now() NOT NULL,
	CONSTRAINT "room_temperature_logs_plausible" CHECK ("room_temperature_logs"."temperature_c" between -30 and 60)
);
--> statement-breakpoint
ALTER TABLE "instruments" ADD COLUMN "operating_min_c" double precision;--> statement-breakpoint
ALTER TABLE "instruments" ADD COLUMN "operating_max_c" double precision;--> statement-breakpoint
ALTER TABLE "lab_orders" ADD COLUMN "kit_lot_id" uuid;--> statement-breakpoint
ALTER TABLE "readings" ADD COLUMN "kit_lot_id" uuid;--> statement-breakpoint
ALTER TABLE "readings" ADD COLUMN "control_material_id" uuid;--> statement-breakpoint
ALTER TABLE "readings" ADD COLUMN "quality_marks" text[] DEFAULT '{}'::text[] NOT NULL;--> statement-breakpoint
ALTER TABLE "control_materials" ADD CONSTRAINT "control_materials_clinic_id_clinics_id_fk" FOREIGN KEY ("clinic_id") REFERENCES "public"."clinics"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "control_materials" ADD CONSTRAINT "control_materials_instrument_id_instruments_id_fk" FOREIGN KEY ("instrument_id") REFERENCES "public"."instruments"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "control_materials" ADD CONSTRAINT "control_materials_created_by_staff_users_id_fk" FOREIGN KEY ("created_by") REFERENCES "public"."staff_users"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "interval_verifications" ADD CONSTRAINT "interval_verifications_clinic_id_clinics_id_fk" FOREIGN KEY ("clinic_id") REFERENCES "public"."clinics"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "interval_verifications" ADD CONSTRAINT "interval_verifications_interval_id_reference_intervals_id_fk" FOREIGN KEY ("interval_id") REFERENCES "public"."reference_intervals"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "interval_verifications" ADD CONSTRAINT "interval_verifications_performed_by_staff_users_id_fk" FOREIGN KEY ("performed_by") REFERENCES "public"."staff_users"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "kit_lots" ADD CONSTRAINT "kit_lots_clinic_id_clinics_id_fk" FOREIGN KEY ("clinic_id") REFERENCES "public"."clinics"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "kit_lots" ADD CONSTRAINT "kit_lots_instrument_id_instruments_id_fk" FOREIGN KEY ("instrument_id") REFERENCES "public"."instruments"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "kit_lots" ADD CONSTRAINT "kit_lots_created_by_staff_users_id_fk" FOREIGN KEY ("created_by") REFERENCES "public"."staff_users"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "quality_goals" ADD CONSTRAINT "quality_goals_clinic_id_clinics_id_fk" FOREIGN KEY ("clinic_id") REFERENCES "public"."clinics"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "quality_goals" ADD CONSTRAINT "quality_goals_updated_by_staff_users_id_fk" FOREIGN KEY ("updated_by") REFERENCES "public"."staff_users"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "room_temperature_logs" ADD CONSTRAINT "room_temperature_logs_clinic_id_clinics_id_fk" FOREIGN KEY ("clinic_id") REFERENCES "public"."clinics"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "room_temperature_logs" ADD CONSTRAINT "room_temperature_logs_recorded_by_staff_users_id_fk" FOREIGN KEY ("recorded_by") REFERENCES "public"."staff_users"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
CREATE UNIQUE INDEX "control_materials_clinic_key" ON "control_materials" USING btree ("clinic_id","analyte","lot_number","level");--> statement-breakpoint
CREATE INDEX "interval_verifications_clinic_idx" ON "interval_verifications" USING btree ("clinic_id","analyte","species");--> statement-breakpoint
CREATE UNIQUE INDEX "kit_lots_clinic_analyte_lot_key" ON "kit_lots" USING btree ("clinic_id","analyte","lot_number");--> statement-breakpoint
CREATE INDEX "kit_lots_loaded_idx" ON "kit_lots" USING btree ("clinic_id","instrument_id","analyte");--> statement-breakpoint
CREATE UNIQUE INDEX "quality_goals_clinic_analyte_key" ON "quality_goals" USING btree ("clinic_id","analyte");--> statement-breakpoint
CREATE UNIQUE INDEX "room_temperature_logs_clinic_day_key" ON "room_temperature_logs" USING btree ("clinic_id","day");--> statement-breakpoint
ALTER TABLE "lab_orders" ADD CONSTRAINT "lab_orders_kit_lot_id_kit_lots_id_fk" FOREIGN KEY ("kit_lot_id") REFERENCES "public"."kit_lots"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "readings" ADD CONSTRAINT "readings_kit_lot_id_kit_lots_id_fk" FOREIGN KEY ("kit_lot_id") REFERENCES "public"."kit_lots"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "readings" ADD CONSTRAINT "readings_control_material_id_control_materials_id_fk" FOREIGN KEY ("control_material_id") REFERENCES "public"."control_materials"("id") ON DELETE restrict ON UPDATE no action;