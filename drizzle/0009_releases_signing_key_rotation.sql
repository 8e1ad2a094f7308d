CREATE TABLE "release" (
	"organisation_id" text NOT NULL,
	"id" uuid DEFAULT gen_random_uuid() NOT NULL,
	"gain_set_id" uuid NOT NULL,
	"loop_template_id" uuid NOT NULL,
	"state" text DEFAULT 'pending' NOT NULL,
	"target" jsonb NOT NULL,
	"pilot" jsonb NOT NULL,
	"guard_window_minutes" integer NOT NULL,
	"max_iae_increase" double precision,
	"max_reject_share" double precision,
	"machine_count" integer NOT NULL,
	"held_reason" text,
	"figures" jsonb,
	"created_by" text NOT NULL,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL,
	"started_at" timestamp with time zone,
	"guard_ends_at" timestamp with time zone,
	"completed_at" timestamp with time zone,
	"updated_at" timestamp with time zone DEFAULT now() NOT NULL,
	CONSTRAINT "release_pk" PRIMARY KEY("organisation_id","id")
);
--> statement-breakpoint
CREATE TABLE "release_target" (
	"organisation_id" text NOT NULL,
	"release_id" uuid NOT NULL,
	"loop_id" uuid NOT NULL,
	"machine_id" uuid NOT NULL,
	"wave" integer NOT NULL,
	"include" boolean DEFAULT true NOT NULL,
	"exclude_reason" text,
	"state" text DEFAULT 'pending' NOT NULL,
	"version" integer,
	"previous_gain_set_id" uuid,
	"previous_gains" jsonb,
	"previous_version" integer,
	"offered_at" timestamp with time zone,
	"acked_at" timestamp with time zone,
	"reject_reason" text,
	"rollback_state" text,
	"rollback_version" integer,
	CONSTRAINT "release_target_pk" PRIMARY KEY("organisation_id","release_id","loop_id")
);
--> statement-breakpoint
CREATE TABLE "release_wave" (
	"organisation_id" text NOT NULL,
	"release_id" uuid NOT NULL,
	"index" integer NOT NULL,
	"state" text DEFAULT 'pending' NOT NULL,
	"offered_at" timestamp with time zone,
	"completed_at" timestamp with time zone,
	CONSTRAINT "release_wave_pk" PRIMARY KEY("organisation_id","release_id","index")
);
--> statement-breakpoint
ALTER TABLE "loop" ADD COLUMN "gain_set_id" uuid;--> statement-breakpoint
ALTER TABLE "loop" ADD COLUMN "applied_gain_set_id" uuid;--> statement-breakpoint
ALTER TABLE "organisation_signing_key" ADD COLUMN "retired_at" timestamp with time zone;--> statement-breakpoint
ALTER TABLE "organisation_signing_key" ADD COLUMN "withdrawn_at" timestamp with time zone;--> statement-breakpoint
ALTER TABLE "release" ADD CONSTRAINT "release_organisation_id_organisation_id_fk" FOREIGN KEY ("organisation_id") REFERENCES "public"."organisation"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "release" ADD CONSTRAINT "release_gain_set_fk" FOREIGN KEY ("organisation_id","gain_set_id") REFERENCES "public"."gain_set"("organisation_id","id") ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "release" ADD CONSTRAINT "release_template_fk" FOREIGN KEY ("organisation_id","loop_template_id") REFERENCES "public"."loop_template"("organisation_id","id") ON DELETE no action ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "release_target" ADD CONSTRAINT "release_target_organisation_id_organisation_id_fk" FOREIGN KEY ("organisation_id") REFERENCES "public"."organisation"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "release_target" ADD CONSTRAINT "release_target_release_fk" FOREIGN KEY ("organisation_id","release_id") REFERENCES "public"."release"("organisation_id","id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "release_target" ADD CONSTRAINT "release_target_loop_fk" FOREIGN KEY ("organisation_id","loop_id") REFERENCES "public"."loop"("organisation_id","id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "release_target" ADD CONSTRAINT "release_target_machine_fk" FOREIGN KEY ("organisation_id","machine_id") REFERENCES "public"."machine"("organisation_id","id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "release_wave" ADD CONSTRAINT "release_wave_organisation_id_organisation_id_fk" FOREIGN KEY ("organisation_id") REFERENCES "public"."organisation"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "release_wave" ADD CONSTRAINT "release_wave_release_fk" FOREIGN KEY ("organisation_id","release_id") REFERENCES "public"."release"("organisation_id","id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
CREATE INDEX "release_organisation_created_idx" ON "release" USING btree ("organisation_id","created_at");--> statement-breakpoint
CREATE INDEX "release_state_idx" ON "release" USING btree ("state");--> statement-breakpoint
CREATE INDEX "release_target_organisation_loop_idx" ON "release_target" USING btree ("organisation_id","loop_id");--> statement-breakpoint
CREATE UNIQUE INDEX "organisation_signing_key_one_active_uq" ON "organisation_signing_key" USING btree ("organisation_id") WHERE status = 'active';