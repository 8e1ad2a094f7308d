CREATE TABLE "gain_set_history" (
	"organisation_id" text NOT NULL,
	"id" uuid DEFAULT gen_random_uuid() NOT NULL,
	"gain_set_id" uuid NOT NULL,
	"state" text NOT NULL,
	"actor" text NOT NULL,
	"comment" text DEFAULT '' NOT NULL,
	"at" timestamp with time zone DEFAULT now() NOT NULL,
	CONSTRAINT "gain_set_history_pk" PRIMARY KEY("organisation_id","id")
);
--> statement-breakpoint
ALTER TABLE "audit_event" ADD COLUMN "before" jsonb;--> statement-breakpoint
ALTER TABLE "audit_event" ADD COLUMN "after" jsonb;--> statement-breakpoint
ALTER TABLE "loop_template" ADD COLUMN "reference_model" jsonb;--> statement-breakpoint
ALTER TABLE "loop_template" ADD COLUMN "min_gain_margin" double precision DEFAULT 2 NOT NULL;--> statement-breakpoint
ALTER TABLE "loop_template" ADD COLUMN "min_phase_margin_deg" double precision DEFAULT 30 NOT NULL;--> statement-breakpoint
ALTER TABLE "gain_set" ADD COLUMN "form" text DEFAULT 'parallel' NOT NULL;--> statement-breakpoint
ALTER TABLE "gain_set" ADD COLUMN "entered_gains" jsonb;--> statement-breakpoint
ALTER TABLE "gain_set" ADD COLUMN "setpoint_weight" double precision DEFAULT 1 NOT NULL;--> statement-breakpoint
ALTER TABLE "gain_set" ADD COLUMN "anti_windup" text DEFAULT 'clamp' NOT NULL;--> statement-breakpoint
ALTER TABLE "gain_set" ADD COLUMN "tracking_time_s" double precision;--> statement-breakpoint
ALTER TABLE "gain_set" ADD COLUMN "output_min" double precision;--> statement-breakpoint
ALTER TABLE "gain_set" ADD COLUMN "output_max" double precision;--> statement-breakpoint
ALTER TABLE "gain_set" ADD COLUMN "integrator_min" double precision;--> statement-breakpoint
ALTER TABLE "gain_set" ADD COLUMN "integrator_max" double precision;--> statement-breakpoint
ALTER TABLE "gain_set" ADD COLUMN "sample_period_s" double precision;--> statement-breakpoint
ALTER TABLE "gain_set" ADD COLUMN "margins" jsonb;--> statement-breakpoint
ALTER TABLE "gain_set" ADD COLUMN "based_on_id" uuid;--> statement-breakpoint
ALTER TABLE "gain_set" ADD COLUMN "proposed_by" text;--> statement-breakpoint
ALTER TABLE "gain_set" ADD COLUMN "proposed_at" timestamp with time zone;--> statement-breakpoint
ALTER TABLE "gain_set" ADD COLUMN "decided_by" text;--> statement-breakpoint
ALTER TABLE "gain_set" ADD COLUMN "decided_at" timestamp with time zone;--> statement-breakpoint
ALTER TABLE "gain_set" ADD COLUMN "checks" jsonb;--> statement-breakpoint
ALTER TABLE "gain_set" ADD COLUMN "override_reason" text;--> statement-breakpoint
ALTER TABLE "gain_set_history" ADD CONSTRAINT "gain_set_history_organisation_id_organisation_id_fk" FOREIGN KEY ("organisation_id") REFERENCES "public"."organisation"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "gain_set_history" ADD CONSTRAINT "gain_set_history_gain_set_fk" FOREIGN KEY ("organisation_id","gain_set_id") REFERENCES "public"."gain_set"("organisation_id","id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
CREATE INDEX "gain_set_history_organisation_gain_set_idx" ON "gain_set_history" USING btree ("organisation_id","gain_set_id","at");--> statement-breakpoint
CREATE INDEX "audit_event_organisation_actor_time_idx" ON "audit_event" USING btree ("organisation_id","actor","created_at");--> statement-breakpoint
CREATE INDEX "audit_event_organisation_action_time_idx" ON "audit_event" USING btree ("organisation_id","action","created_at");--> statement-breakpoint
-- hand-written below
-- The audit log is append-only: no UPDATE, DELETE or TRUNCATE, from the app or from SQL.
-- (An organisation with audit events therefore cannot be deleted by cascade either.)
CREATE OR REPLACE FUNCTION flyball_audit_append_only() RETURNS trigger LANGUAGE plpgsql AS $$
BEGIN
  RAISE EXCEPTION 'the audit log is append-only: % is not allowed on audit_event', TG_OP USING ERRCODE = 'insufficient_privilege';
END $$;--> statement-breakpoint
CREATE TRIGGER audit_event_no_update_delete BEFORE UPDATE OR DELETE ON "audit_event" FOR EACH ROW EXECUTE FUNCTION flyball_audit_append_only();--> statement-breakpoint
CREATE TRIGGER audit_event_no_truncate BEFORE TRUNCATE ON "audit_event" FOR EACH STATEMENT EXECUTE FUNCTION flyball_audit_append_only();--> statement-breakpoint
-- A gain set's parameters are fixed once it leaves draft: only its state and the fields that
-- record proposal, decision and checks may change after that.
CREATE OR REPLACE FUNCTION flyball_gain_set_fixed_after_draft() RETURNS trigger LANGUAGE plpgsql AS $$
BEGIN
  IF OLD.state <> 'draft' AND (
    NEW.loop_template_id IS DISTINCT FROM OLD.loop_template_id OR NEW.version IS DISTINCT FROM OLD.version
    OR NEW.form IS DISTINCT FROM OLD.form OR NEW.entered_gains IS DISTINCT FROM OLD.entered_gains
    OR NEW.gains IS DISTINCT FROM OLD.gains OR NEW.filter_n IS DISTINCT FROM OLD.filter_n
    OR NEW.setpoint_weight IS DISTINCT FROM OLD.setpoint_weight OR NEW.anti_windup IS DISTINCT FROM OLD.anti_windup
    OR NEW.tracking_time_s IS DISTINCT FROM OLD.tracking_time_s
    OR NEW.output_min IS DISTINCT FROM OLD.output_min OR NEW.output_max IS DISTINCT FROM OLD.output_max
    OR NEW.integrator_min IS DISTINCT FROM OLD.integrator_min OR NEW.integrator_max IS DISTINCT FROM OLD.integrator_max
    OR NEW.sample_period_s IS DISTINCT FROM OLD.sample_period_s OR NEW.note IS DISTINCT FROM OLD.note
  ) THEN
    RAISE EXCEPTION 'gain set % is %: its parameters cannot change (make a new version)', OLD.id, OLD.state USING ERRCODE = 'check_violation';
  END IF;
  RETURN NEW;
END $$;--> statement-breakpoint
CREATE TRIGGER gain_set_fixed_after_draft BEFORE UPDATE ON "gain_set" FOR EACH ROW EXECUTE FUNCTION flyball_gain_set_fixed_after_draft();--> statement-breakpoint
ALTER TABLE "gain_set" ADD CONSTRAINT "gain_set_state_ck" CHECK (state IN ('draft', 'proposed', 'approved', 'released', 'retired', 'rejected'));--> statement-breakpoint
ALTER TABLE "gain_set" ADD CONSTRAINT "gain_set_form_ck" CHECK (form IN ('parallel', 'standard'));--> statement-breakpoint
ALTER TABLE "gain_set" ADD CONSTRAINT "gain_set_anti_windup_ck" CHECK (anti_windup IN ('clamp', 'back_calculation'));--> statement-breakpoint
-- Drafts saved before these columns: take the template's limits and period, gains as entered.
UPDATE "gain_set" g SET
  entered_gains = jsonb_build_object('form', 'parallel') || g.gains,
  output_min = t.output_min, output_max = t.output_max,
  integrator_min = t.output_min, integrator_max = t.output_max,
  sample_period_s = t.sample_period_s
FROM "loop_template" t
WHERE t.organisation_id = g.organisation_id AND t.id = g.loop_template_id AND g.entered_gains IS NULL AND g.state = 'draft';--> statement-breakpoint
INSERT INTO "gain_set_history" (organisation_id, gain_set_id, state, actor, comment, at)
SELECT g.organisation_id, g.id, g.state, g.created_by, '', g.created_at FROM "gain_set" g
WHERE NOT EXISTS (SELECT 1 FROM "gain_set_history" h WHERE h.organisation_id = g.organisation_id AND h.gain_set_id = g.id);
