CREATE TABLE "instrument_units" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"clinic_id" uuid NOT NULL,
	"instrument_id" uuid NOT NULL,
	"printed" text NOT NULL,
	"ucum" text,
	"reading_count" integer DEFAULT 0 NOT NULL,
	"first_seen_at" timestamp with time zone DEFAULT now() NOT NULL,
	"last_seen_at" timestamp with time zone DEFAULT now() NOT NULL,
	"mapped_by" uuid,
	"mapped_at" timestamp with time zone
);
--> statement-breakpoint
ALTER TABLE "readings" ADD COLUMN "printed_unit" text;--> statement-breakpoint
ALTER TABLE "instrument_units" ADD CONSTRAINT "instrument_units_clinic_id_clinics_id_fk" FOREIGN KEY ("clinic_id") REFERENCES "public"."clinics"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "instrument_units" ADD CONSTRAINT "instrument_units_instrument_id_instruments_id_fk" FOREIGN KEY ("instrument_id") REFERENCES "public"."instruments"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "instrument_units" ADD CONSTRAINT "instrument_units_mapped_by_staff_users_id_fk" FOREIGN KEY ("mapped_by") REFERENCES "public"."staff_users"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
CREATE UNIQUE INDEX "instrument_units_instrument_printed_key" ON "instrument_units" USING btree ("instrument_id","printed");