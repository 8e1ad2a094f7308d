CREATE TABLE "loop" (
	"organisation_id" text NOT NULL,
	"id" uuid DEFAULT gen_random_uuid() NOT NULL,
	"machine_id" uuid NOT NULL,
	"template_id" uuid NOT NULL,
	"key" text NOT NULL,
	"gains" jsonb NOT NULL,
	"config_version" integer DEFAULT 1 NOT NULL,
	"applied_version" integer,
	"ack_status" text,
	"ack_reason" text,
	"acked_at" timestamp with time zone,
	"health_band" text,
	"health_score" integer,
	"health_reasons" jsonb DEFAULT '[]'::jsonb NOT NULL,
	"last_digest_at" timestamp with time zone,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL,
	CONSTRAINT "loop_pk" PRIMARY KEY("organisation_id","id")
);
--> statement-breakpoint
CREATE TABLE "loop_template" (
	"organisation_id" text NOT NULL,
	"id" uuid DEFAULT gen_random_uuid() NOT NULL,
	"model_id" uuid NOT NULL,
	"key" text NOT NULL,
	"name" text NOT NULL,
	"unit" text NOT NULL,
	"output_unit" text DEFAULT '%' NOT NULL,
	"sample_period_s" double precision NOT NULL,
	"controller_form" text DEFAULT 'parallel' NOT NULL,
	"output_min" double precision NOT NULL,
	"output_max" double precision NOT NULL,
	"default_gains" jsonb NOT NULL,
	"gain_envelope" jsonb NOT NULL,
	"thresholds" jsonb NOT NULL,
	"position" integer DEFAULT 0 NOT NULL,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL,
	CONSTRAINT "loop_template_pk" PRIMARY KEY("organisation_id","id")
);
--> statement-breakpoint
CREATE TABLE "machine" (
	"organisation_id" text NOT NULL,
	"id" uuid DEFAULT gen_random_uuid() NOT NULL,
	"serial" text NOT NULL,
	"model_id" uuid NOT NULL,
	"site_id" uuid NOT NULL,
	"firmware" text,
	"status" text DEFAULT 'active' NOT NULL,
	"last_seen_at" timestamp with time zone,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL,
	"decommissioned_at" timestamp with time zone,
	CONSTRAINT "machine_pk" PRIMARY KEY("organisation_id","id")
);
--> statement-breakpoint
CREATE TABLE "machine_model" (
	"organisation_id" text NOT NULL,
	"id" uuid DEFAULT gen_random_uuid() NOT NULL,
	"name" text NOT NULL,
	"description" text DEFAULT '' NOT NULL,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL,
	CONSTRAINT "machine_model_pk" PRIMARY KEY("organisation_id","id")
);
--> statement-breakpoint
CREATE TABLE "device" (
	"organisation_id" text NOT NULL,
	"id" uuid DEFAULT gen_random_uuid() NOT NULL,
	"machine_id" uuid NOT NULL,
	"alg" text NOT NULL,
	"public_jwk" jsonb NOT NULL,
	"thumbprint" text NOT NULL,
	"firmware" text,
	"status" text DEFAULT 'active' NOT NULL,
	"enrolled_at" timestamp with time zone DEFAULT now() NOT NULL,
	"revoked_at" timestamp with time zone,
	CONSTRAINT "device_pk" PRIMARY KEY("organisation_id","id")
);
--> statement-breakpoint
CREATE TABLE "device_jti" (
	"organisation_id" text NOT NULL,
	"device_id" uuid NOT NULL,
	"jti" text NOT NULL,
	"expires_at" timestamp with time zone NOT NULL,
	CONSTRAINT "device_jti_pk" PRIMARY KEY("organisation_id","device_id","jti")
);
--> statement-breakpoint
CREATE TABLE "enrolment_code" (
	"organisation_id" text NOT NULL,
	"id" uuid DEFAULT gen_random_uuid() NOT NULL,
	"machine_id" uuid NOT NULL,
	"code_hash" text NOT NULL,
	"expires_at" timestamp with time zone NOT NULL,
	"used_at" timestamp with time zone,
	"superseded_at" timestamp with time zone,
	"created_by" text NOT NULL,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL,
	CONSTRAINT "enrolment_code_pk" PRIMARY KEY("organisation_id","id")
);
--> statement-breakpoint
CREATE TABLE "organisation_signing_key" (
	"organisation_id" text NOT NULL,
	"id" uuid DEFAULT gen_random_uuid() NOT NULL,
	"alg" text DEFAULT 'EdDSA' NOT NULL,
	"public_jwk" jsonb NOT NULL,
	"private_jwk" jsonb NOT NULL,
	"status" text DEFAULT 'active' NOT NULL,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL,
	CONSTRAINT "organisation_signing_key_pk" PRIMARY KEY("organisation_id","id")
);
--> statement-breakpoint
CREATE TABLE "digest" (
	"organisation_id" text NOT NULL,
	"loop_id" uuid NOT NULL,
	"window_start" timestamp with time zone NOT NULL,
	"seq" integer NOT NULL,
	"window_end" timestamp with time zone NOT NULL,
	"received_at" timestamp with time zone DEFAULT now() NOT NULL,
	"samples" integer NOT NULL,
	"gain_version" integer NOT NULL,
	"sp_mean" double precision NOT NULL,
	"pv_mean" double precision NOT NULL,
	"err_mean" double precision NOT NULL,
	"err_rms" double precision NOT NULL,
	"err_max_abs" double precision NOT NULL,
	"iae" double precision NOT NULL,
	"ise" double precision NOT NULL,
	"u_mean" double precision NOT NULL,
	"u_std" double precision NOT NULL,
	"sat_high_frac" double precision NOT NULL,
	"sat_low_frac" double precision NOT NULL,
	"int_clamp_frac" double precision NOT NULL,
	"osc_count" integer NOT NULL,
	"sp_changes" integer NOT NULL,
	CONSTRAINT "digest_pk" PRIMARY KEY("organisation_id","loop_id","window_start","seq")
) PARTITION BY RANGE ("window_start");
--> statement-breakpoint
CREATE TABLE "digest_seq" (
	"organisation_id" text NOT NULL,
	"loop_id" uuid NOT NULL,
	"seq" integer NOT NULL,
	CONSTRAINT "digest_seq_pk" PRIMARY KEY("organisation_id","loop_id","seq")
);
--> statement-breakpoint
ALTER TABLE "loop" ADD CONSTRAINT "loop_organisation_id_organisation_id_fk" FOREIGN KEY ("organisation_id") REFERENCES "public"."organisation"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "loop" ADD CONSTRAINT "loop_machine_fk" FOREIGN KEY ("organisation_id","machine_id") REFERENCES "public"."machine"("organisation_id","id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "loop" ADD CONSTRAINT "loop_template_fk" FOREIGN KEY ("organisation_id","template_id") REFERENCES "public"."loop_template"("organisation_id","id") ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "loop_template" ADD CONSTRAINT "loop_template_organisation_id_organisation_id_fk" FOREIGN KEY ("organisation_id") REFERENCES "public"."organisation"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "loop_template" ADD CONSTRAINT "loop_template_model_fk" FOREIGN KEY ("organisation_id","model_id") REFERENCES "public"."machine_model"("organisation_id","id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "machine" ADD CONSTRAINT "machine_organisation_id_organisation_id_fk" FOREIGN KEY ("organisation_id") REFERENCES "public"."organisation"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "machine" ADD CONSTRAINT "machine_model_fk" FOREIGN KEY ("organisation_id","model_id") REFERENCES "public"."machine_model"("organisation_id","id") ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "machine" ADD CONSTRAINT "machine_site_fk" FOREIGN KEY ("organisation_id","site_id") REFERENCES "public"."site"("organisation_id","id") ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "machine_model" ADD CONSTRAINT "machine_model_organisation_id_organisation_id_fk" FOREIGN KEY ("organisation_id") REFERENCES "public"."organisation"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "device" ADD CONSTRAINT "device_organisation_id_organisation_id_fk" FOREIGN KEY ("organisation_id") REFERENCES "public"."organisation"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "device" ADD CONSTRAINT "device_machine_fk" FOREIGN KEY ("organisation_id","machine_id") REFERENCES "public"."machine"("organisation_id","id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "device_jti" ADD CONSTRAINT "device_jti_organisation_id_organisation_id_fk" FOREIGN KEY ("organisation_id") REFERENCES "public"."organisation"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "enrolment_code" ADD CONSTRAINT "enrolment_code_organisation_id_organisation_id_fk" FOREIGN KEY ("organisation_id") REFERENCES "public"."organisation"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "enrolment_code" ADD CONSTRAINT "enrolment_code_machine_fk" FOREIGN KEY ("organisation_id","machine_id") REFERENCES "public"."machine"("organisation_id","id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "organisation_signing_key" ADD CONSTRAINT "organisation_signing_key_organisation_id_organisation_id_fk" FOREIGN KEY ("organisation_id") REFERENCES "public"."organisation"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "digest" ADD CONSTRAINT "digest_loop_fk" FOREIGN KEY ("organisation_id","loop_id") REFERENCES "public"."loop"("organisation_id","id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "digest_seq" ADD CONSTRAINT "digest_seq_loop_fk" FOREIGN KEY ("organisation_id","loop_id") REFERENCES "public"."loop"("organisation_id","id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
CREATE UNIQUE INDEX "loop_organisation_machine_key_uq" ON "loop" USING btree ("organisation_id","machine_id","key");--> statement-breakpoint
CREATE INDEX "loop_organisation_template_idx" ON "loop" USING btree ("organisation_id","template_id");--> statement-breakpoint
CREATE UNIQUE INDEX "loop_template_organisation_model_key_uq" ON "loop_template" USING btree ("organisation_id","model_id","key");--> statement-breakpoint
CREATE UNIQUE INDEX "machine_organisation_serial_uq" ON "machine" USING btree ("organisation_id","serial");--> statement-breakpoint
CREATE UNIQUE INDEX "machine_id_uq" ON "machine" USING btree ("id");--> statement-breakpoint
CREATE INDEX "machine_organisation_site_idx" ON "machine" USING btree ("organisation_id","site_id");--> statement-breakpoint
CREATE INDEX "machine_organisation_model_idx" ON "machine" USING btree ("organisation_id","model_id");--> statement-breakpoint
CREATE UNIQUE INDEX "machine_model_organisation_name_uq" ON "machine_model" USING btree ("organisation_id","name");--> statement-breakpoint
CREATE UNIQUE INDEX "device_id_uq" ON "device" USING btree ("id");--> statement-breakpoint
CREATE INDEX "device_organisation_machine_idx" ON "device" USING btree ("organisation_id","machine_id");--> statement-breakpoint
CREATE INDEX "device_jti_expires_idx" ON "device_jti" USING btree ("expires_at");--> statement-breakpoint
CREATE UNIQUE INDEX "enrolment_code_hash_uq" ON "enrolment_code" USING btree ("code_hash");--> statement-breakpoint
CREATE INDEX "enrolment_code_organisation_machine_idx" ON "enrolment_code" USING btree ("organisation_id","machine_id");--> statement-breakpoint
CREATE INDEX "organisation_signing_key_status_idx" ON "organisation_signing_key" USING btree ("organisation_id","status");--> statement-breakpoint
-- Hand-written: monthly partitions of digest, created ahead by the partition job
-- (app/.server/jobs/definitions.ts) and on demand by the ingest path.
CREATE OR REPLACE FUNCTION flyball_ensure_digest_partitions(first_month date, months integer) RETURNS integer
LANGUAGE plpgsql AS $$
DECLARE
  m date := date_trunc('month', first_month)::date;
  created integer := 0;
  name text;
BEGIN
  FOR i IN 0..greatest(months - 1, 0) LOOP
    name := format('digest_y%sm%s', to_char(m, 'YYYY'), to_char(m, 'MM'));
    IF to_regclass(name) IS NULL THEN
      EXECUTE format('CREATE TABLE IF NOT EXISTS %I PARTITION OF digest FOR VALUES FROM (%L) TO (%L)',
        name, to_char(m, 'YYYY-MM-DD') || ' 00:00:00+00', to_char(m + interval '1 month', 'YYYY-MM-DD') || ' 00:00:00+00');
      created := created + 1;
    END IF;
    m := (m + interval '1 month')::date;
  END LOOP;
  RETURN created;
END $$;--> statement-breakpoint
SELECT flyball_ensure_digest_partitions((now() - interval '3 months')::date, 7);
