CREATE TABLE "capture_imports" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"clinic_id" uuid NOT NULL,
	"instrument_id" uuid NOT NULL,
	"instrument_code" text NOT NULL,
	"dialect" text NOT NULL,
	"profile_key" uuid,
	"profile_version" bigint,
	"file_name" text NOT NULL,
	"file_bytes" integer NOT NULL,
	"sha256" text NOT NULL,
	"imported_by" uuid NOT NULL,
	"readings_added" integer NOT NULL,
	"readings_already_stored" integer NOT NULL,
	"captures_added" integer NOT NULL,
	"captures_already_stored" integer NOT NULL,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL
);
--> statement-breakpoint
ALTER TABLE "readings" ALTER COLUMN "bridge_id" DROP NOT NULL;--> statement-breakpoint
ALTER TABLE "unparsed_captures" ALTER COLUMN "bridge_id" DROP NOT NULL;--> statement-breakpoint
ALTER TABLE "readings" ADD COLUMN "capture_import_id" uuid;--> statement-breakpoint
ALTER TABLE "unparsed_captures" ADD COLUMN "capture_import_id" uuid;--> statement-breakpoint
ALTER TABLE "capture_imports" ADD CONSTRAINT "capture_imports_clinic_id_clinics_id_fk" FOREIGN KEY ("clinic_id") REFERENCES "public"."clinics"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "capture_imports" ADD CONSTRAINT "capture_imports_instrument_id_instruments_id_fk" FOREIGN KEY ("instrument_id") REFERENCES "public"."instruments"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "capture_imports" ADD CONSTRAINT "capture_imports_imported_by_staff_users_id_fk" FOREIGN KEY ("imported_by") REFERENCES "public"."staff_users"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
CREATE INDEX "capture_imports_clinic_idx" ON "capture_imports" USING btree ("clinic_id","created_at");--> statement-breakpoint
CREATE INDEX "capture_imports_sha_idx" ON "capture_imports" USING btree ("clinic_id","sha256");--> statement-breakpoint
ALTER TABLE "readings" ADD CONSTRAINT "readings_capture_import_id_capture_imports_id_fk" FOREIGN KEY ("capture_import_id") REFERENCES "public"."capture_imports"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "unparsed_captures" ADD CONSTRAINT "unparsed_captures_capture_import_id_capture_imports_id_fk" FOREIGN KEY ("capture_import_id") REFERENCES "public"."capture_imports"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
CREATE INDEX "readings_content_idx" ON "readings" USING btree ("clinic_id","instrument_code",md5("raw"));--> statement-breakpoint
CREATE INDEX "unparsed_captures_content_idx" ON "unparsed_captures" USING btree ("clinic_id","instrument_code",md5("raw"));--> statement-breakpoint
ALTER TABLE "readings" ADD CONSTRAINT "readings_one_source" CHECK (("readings"."bridge_id" is null) <> ("readings"."capture_import_id" is null));--> statement-breakpoint
ALTER TABLE "unparsed_captures" ADD CONSTRAINT "unparsed_captures_one_source" CHECK (("unparsed_captures"."bridge_id" is null) <> ("unparsed_captures"."capture_import_id" is null));