CREATE TABLE "account_cables" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"organisation_id" uuid NOT NULL,
	"cable_id" text NOT NULL,
	"designation" text NOT NULL,
	"impedance_ohm" double precision NOT NULL,
	"velocity_factor" double precision NOT NULL,
	"attenuation" jsonb NOT NULL,
	"max_voltage_rms_v" double precision,
	"source" text NOT NULL,
	"notes" text DEFAULT '' NOT NULL,
	"created_by" uuid,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL,
	"updated_at" timestamp with time zone DEFAULT now() NOT NULL
);
--> statement-breakpoint
CREATE TABLE "feedlines" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"organisation_id" uuid NOT NULL,
	"name" text NOT NULL,
	"notes" text DEFAULT '' NOT NULL,
	"sections" jsonb NOT NULL,
	"created_by" uuid,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL,
	"updated_at" timestamp with time zone DEFAULT now() NOT NULL
);
--> statement-breakpoint
CREATE TABLE "sweeps" (
	"id" uuid PRIMARY KEY DEFAULT gen_random_uuid() NOT NULL,
	"organisation_id" uuid NOT NULL,
	"created_by" uuid,
	"name" text NOT NULL,
	"source_format" text NOT NULL,
	"file_name" text,
	"reference_ohm" double precision NOT NULL,
	"threshold_swr" double precision NOT NULL,
	"direction" text,
	"line" jsonb,
	"feedline_id" uuid,
	"mask" jsonb,
	"point_count" integer NOT NULL,
	"start_hz" double precision NOT NULL,
	"stop_hz" double precision NOT NULL,
	"measured_points" "bytea" NOT NULL,
	"moved_points" "bytea",
	"summary" jsonb NOT NULL,
	"verdict" jsonb,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL
);
--> statement-breakpoint
ALTER TABLE "account_cables" ADD CONSTRAINT "account_cables_organisation_id_organisations_id_fk" FOREIGN KEY ("organisation_id") REFERENCES "public"."organisations"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "account_cables" ADD CONSTRAINT "account_cables_created_by_users_id_fk" FOREIGN KEY ("created_by") REFERENCES "public"."users"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "feedlines" ADD CONSTRAINT "feedlines_organisation_id_organisations_id_fk" FOREIGN KEY ("organisation_id") REFERENCES "public"."organisations"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "feedlines" ADD CONSTRAINT "feedlines_created_by_users_id_fk" FOREIGN KEY ("created_by") REFERENCES "public"."users"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "sweeps" ADD CONSTRAINT "sweeps_organisation_id_organisations_id_fk" FOREIGN KEY ("organisation_id") REFERENCES "public"."organisations"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "sweeps" ADD CONSTRAINT "sweeps_created_by_users_id_fk" FOREIGN KEY ("created_by") REFERENCES "public"."users"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "sweeps" ADD CONSTRAINT "sweeps_feedline_id_feedlines_id_fk" FOREIGN KEY ("feedline_id") REFERENCES "public"."feedlines"("id") ON DELETE set null ON UPDATE no action;--> statement-breakpoint
CREATE UNIQUE INDEX "account_cables_organisation_cable_unique" ON "account_cables" USING btree ("organisation_id","cable_id");--> statement-breakpoint
CREATE INDEX "feedlines_organisation_idx" ON "feedlines" USING btree ("organisation_id","created_at");--> statement-breakpoint
CREATE INDEX "sweeps_organisation_created_idx" ON "sweeps" USING btree ("organisation_id","created_at");