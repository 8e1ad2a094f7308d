CREATE TABLE "alert_delivery" (
	"organisation_id" text NOT NULL,
	"key" text NOT NULL,
	"finding_id" uuid NOT NULL,
	"member_id" text NOT NULL,
	"email_key" text NOT NULL,
	"status" text DEFAULT 'pending' NOT NULL,
	"email_id" text,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL,
	"sent_at" timestamp with time zone,
	CONSTRAINT "alert_delivery_pk" PRIMARY KEY("organisation_id","key")
);
--> statement-breakpoint
CREATE TABLE "alert_subscription" (
	"organisation_id" text NOT NULL,
	"member_id" text NOT NULL,
	"kinds" text[] NOT NULL,
	"min_severity" text NOT NULL,
	"site_ids" uuid[] NOT NULL,
	"summary_after" integer NOT NULL,
	"updated_at" timestamp with time zone DEFAULT now() NOT NULL,
	CONSTRAINT "alert_subscription_pk" PRIMARY KEY("organisation_id","member_id")
);
--> statement-breakpoint
CREATE TABLE "finding" (
	"organisation_id" text NOT NULL,
	"id" uuid DEFAULT gen_random_uuid() NOT NULL,
	"machine_id" uuid NOT NULL,
	"loop_id" uuid NOT NULL,
	"kind" text NOT NULL,
	"severity" text NOT NULL,
	"state" text DEFAULT 'open' NOT NULL,
	"summary" text NOT NULL,
	"evidence" jsonb NOT NULL,
	"opened_at" timestamp with time zone DEFAULT now() NOT NULL,
	"updated_at" timestamp with time zone DEFAULT now() NOT NULL,
	"resolved_at" timestamp with time zone,
	"clear_since" timestamp with time zone,
	"alert_pending" integer DEFAULT 1 NOT NULL,
	CONSTRAINT "finding_pk" PRIMARY KEY("organisation_id","id")
);
--> statement-breakpoint
CREATE TABLE "finding_event" (
	"organisation_id" text NOT NULL,
	"id" uuid DEFAULT gen_random_uuid() NOT NULL,
	"finding_id" uuid NOT NULL,
	"at" timestamp with time zone DEFAULT now() NOT NULL,
	"state" text NOT NULL,
	"severity" text,
	"actor_id" text,
	"comment" text,
	CONSTRAINT "finding_event_pk" PRIMARY KEY("organisation_id","id")
);
--> statement-breakpoint
CREATE TABLE "loop_health_day" (
	"organisation_id" text NOT NULL,
	"loop_id" uuid NOT NULL,
	"day" date NOT NULL,
	"band" text NOT NULL,
	"score" integer,
	CONSTRAINT "loop_health_day_pk" PRIMARY KEY("organisation_id","loop_id","day")
);
--> statement-breakpoint
CREATE TABLE "loop_health" (
	"organisation_id" text NOT NULL,
	"loop_id" uuid NOT NULL,
	"figures" jsonb NOT NULL,
	"evaluated_at" timestamp with time zone NOT NULL,
	CONSTRAINT "loop_health_pk" PRIMARY KEY("organisation_id","loop_id")
);
--> statement-breakpoint
CREATE TABLE "loop_hour" (
	"organisation_id" text NOT NULL,
	"loop_id" uuid NOT NULL,
	"hour" timestamp with time zone NOT NULL,
	"digests" integer NOT NULL,
	"samples" bigint NOT NULL,
	"seconds" numeric NOT NULL,
	"iae" numeric NOT NULL,
	"sat_samples" numeric NOT NULL,
	"clamp_samples" numeric NOT NULL,
	"pinned_samples" numeric NOT NULL,
	"err2_samples" numeric NOT NULL,
	"osc_count" bigint NOT NULL,
	"last_window_end" timestamp with time zone NOT NULL,
	"gain_version" integer NOT NULL,
	CONSTRAINT "loop_hour_pk" PRIMARY KEY("organisation_id","loop_id","hour")
);
--> statement-breakpoint
CREATE TABLE "retune_event" (
	"organisation_id" text NOT NULL,
	"id" uuid DEFAULT gen_random_uuid() NOT NULL,
	"request_id" uuid NOT NULL,
	"at" timestamp with time zone DEFAULT now() NOT NULL,
	"state" text NOT NULL,
	"actor_id" text,
	"comment" text,
	CONSTRAINT "retune_event_pk" PRIMARY KEY("organisation_id","id")
);
--> statement-breakpoint
CREATE TABLE "retune_request" (
	"organisation_id" text NOT NULL,
	"id" uuid DEFAULT gen_random_uuid() NOT NULL,
	"machine_id" uuid NOT NULL,
	"loop_id" uuid,
	"observation" text NOT NULL,
	"state" text DEFAULT 'open' NOT NULL,
	"requested_by" text,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL,
	"updated_at" timestamp with time zone DEFAULT now() NOT NULL,
	CONSTRAINT "retune_request_pk" PRIMARY KEY("organisation_id","id")
);
--> statement-breakpoint
ALTER TABLE "alert_delivery" ADD CONSTRAINT "alert_delivery_organisation_id_organisation_id_fk" FOREIGN KEY ("organisation_id") REFERENCES "public"."organisation"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "alert_delivery" ADD CONSTRAINT "alert_delivery_finding_fk" FOREIGN KEY ("organisation_id","finding_id") REFERENCES "public"."finding"("organisation_id","id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "alert_subscription" ADD CONSTRAINT "alert_subscription_organisation_id_organisation_id_fk" FOREIGN KEY ("organisation_id") REFERENCES "public"."organisation"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "alert_subscription" ADD CONSTRAINT "alert_subscription_member_fk" FOREIGN KEY ("organisation_id","member_id") REFERENCES "public"."member"("organisation_id","id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "finding" ADD CONSTRAINT "finding_organisation_id_organisation_id_fk" FOREIGN KEY ("organisation_id") REFERENCES "public"."organisation"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "finding" ADD CONSTRAINT "finding_loop_fk" FOREIGN KEY ("organisation_id","loop_id") REFERENCES "public"."loop"("organisation_id","id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "finding" ADD CONSTRAINT "finding_machine_fk" FOREIGN KEY ("organisation_id","machine_id") REFERENCES "public"."machine"("organisation_id","id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "finding_event" ADD CONSTRAINT "finding_event_organisation_id_organisation_id_fk" FOREIGN KEY ("organisation_id") REFERENCES "public"."organisation"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "finding_event" ADD CONSTRAINT "finding_event_finding_fk" FOREIGN KEY ("organisation_id","finding_id") REFERENCES "public"."finding"("organisation_id","id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "loop_health_day" ADD CONSTRAINT "loop_health_day_organisation_id_organisation_id_fk" FOREIGN KEY ("organisation_id") REFERENCES "public"."organisation"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "loop_health_day" ADD CONSTRAINT "loop_health_day_loop_fk" FOREIGN KEY ("organisation_id","loop_id") REFERENCES "public"."loop"("organisation_id","id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "loop_health" ADD CONSTRAINT "loop_health_organisation_id_organisation_id_fk" FOREIGN KEY ("organisation_id") REFERENCES "public"."organisation"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "loop_health" ADD CONSTRAINT "loop_health_loop_fk" FOREIGN KEY ("organisation_id","loop_id") REFERENCES "public"."loop"("organisation_id","id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "retune_event" ADD CONSTRAINT "retune_event_organisation_id_organisation_id_fk" FOREIGN KEY ("organisation_id") REFERENCES "public"."organisation"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "retune_event" ADD CONSTRAINT "retune_event_request_fk" FOREIGN KEY ("organisation_id","request_id") REFERENCES "public"."retune_request"("organisation_id","id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "retune_request" ADD CONSTRAINT "retune_request_organisation_id_organisation_id_fk" FOREIGN KEY ("organisation_id") REFERENCES "public"."organisation"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "retune_request" ADD CONSTRAINT "retune_request_machine_fk" FOREIGN KEY ("organisation_id","machine_id") REFERENCES "public"."machine"("organisation_id","id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
CREATE INDEX "alert_delivery_email_idx" ON "alert_delivery" USING btree ("organisation_id","email_key");--> statement-breakpoint
CREATE UNIQUE INDEX "finding_one_open_uq" ON "finding" USING btree ("organisation_id","loop_id","kind") WHERE state in ('open', 'acknowledged');--> statement-breakpoint
CREATE INDEX "finding_organisation_state_updated_idx" ON "finding" USING btree ("organisation_id","state","updated_at");--> statement-breakpoint
CREATE INDEX "finding_organisation_machine_idx" ON "finding" USING btree ("organisation_id","machine_id");--> statement-breakpoint
CREATE INDEX "finding_alert_pending_idx" ON "finding" USING btree ("organisation_id") WHERE alert_pending = 1;--> statement-breakpoint
CREATE INDEX "finding_event_finding_idx" ON "finding_event" USING btree ("organisation_id","finding_id","at");--> statement-breakpoint
CREATE INDEX "loop_health_day_organisation_day_idx" ON "loop_health_day" USING btree ("organisation_id","day");--> statement-breakpoint
CREATE INDEX "retune_event_request_idx" ON "retune_event" USING btree ("organisation_id","request_id","at");--> statement-breakpoint
CREATE INDEX "retune_request_organisation_state_idx" ON "retune_request" USING btree ("organisation_id","state","updated_at");--> statement-breakpoint
CREATE INDEX "retune_request_machine_idx" ON "retune_request" USING btree ("organisation_id","machine_id");--> statement-breakpoint
-- hand-written below
-- A deleted loop's hourly rollups go with it (loop_hour has no foreign key: see schema/health.ts).
CREATE OR REPLACE FUNCTION flyball_forget_loop_hours() RETURNS trigger
LANGUAGE plpgsql AS $$
BEGIN
  DELETE FROM loop_hour h USING gone_loop g WHERE h.organisation_id = g.organisation_id AND h.loop_id = g.id;
  RETURN NULL;
END $$;
--> statement-breakpoint
CREATE TRIGGER loop_forget_loop_hours AFTER DELETE ON loop REFERENCING OLD TABLE AS gone_loop
  FOR EACH STATEMENT EXECUTE FUNCTION flyball_forget_loop_hours();
--> statement-breakpoint
ALTER TABLE finding ADD CONSTRAINT finding_kind_ck CHECK (kind IN ('drift', 'windup', 'saturation', 'oscillation', 'silent', 'config_rejected'));
--> statement-breakpoint
ALTER TABLE finding ADD CONSTRAINT finding_state_ck CHECK (state IN ('open', 'acknowledged', 'resolved'));
--> statement-breakpoint
ALTER TABLE finding ADD CONSTRAINT finding_severity_ck CHECK (severity IN ('info', 'warning', 'critical'));
--> statement-breakpoint
ALTER TABLE retune_request ADD CONSTRAINT retune_request_state_ck CHECK (state IN ('open', 'in_progress', 'done', 'declined'));
