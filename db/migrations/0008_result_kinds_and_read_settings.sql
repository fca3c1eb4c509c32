ALTER TABLE "analyte_settings" ADD COLUMN "abnormal_codes" text[] DEFAULT '{}'::text[] NOT NULL;--> statement-breakpoint
ALTER TABLE "instruments" ADD COLUMN "read_settings" jsonb DEFAULT '{}'::jsonb NOT NULL;--> statement-breakpoint
ALTER TABLE "readings" ADD COLUMN "value_code" jsonb;--> statement-breakpoint
ALTER TABLE "readings" ADD COLUMN "value_text" text;--> statement-breakpoint
ALTER TABLE "readings" ADD COLUMN "notes" text[] DEFAULT '{}'::text[] NOT NULL;--> statement-breakpoint
ALTER TABLE "readings" ADD COLUMN "entered_by" uuid;--> statement-breakpoint
ALTER TABLE "readings" ADD CONSTRAINT "readings_entered_by_staff_users_id_fk" FOREIGN KEY ("entered_by") REFERENCES "public"."staff_users"("id") ON DELETE restrict ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "readings" ADD CONSTRAINT "readings_one_kind_of_value" CHECK (("readings"."value" is not null)::int + ("readings"."value_code" is not null)::int + ("readings"."value_text" is not null)::int <= 1);