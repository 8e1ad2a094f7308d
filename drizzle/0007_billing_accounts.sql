CREATE TABLE "billing_account" (
	"organisation_id" text PRIMARY KEY NOT NULL,
	"stripe_customer_id" text,
	"stripe_subscription_id" text,
	"plan" text DEFAULT 'trial' NOT NULL,
	"status" text DEFAULT 'trialing' NOT NULL,
	"trial_ends_at" timestamp with time zone NOT NULL,
	"current_period_end" timestamp with time zone,
	"machines_billed" integer DEFAULT 0 NOT NULL,
	"subscription_created" bigint,
	"state_at" bigint,
	"quantity_change_seq" integer DEFAULT 0 NOT NULL,
	"quantity_synced_seq" integer DEFAULT 0 NOT NULL,
	"last_payment_failed_at" timestamp with time zone,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL,
	"updated_at" timestamp with time zone DEFAULT now() NOT NULL
);
--> statement-breakpoint
CREATE TABLE "stripe_event" (
	"id" text PRIMARY KEY NOT NULL,
	"type" text NOT NULL,
	"created" bigint NOT NULL,
	"payload" jsonb NOT NULL,
	"organisation_id" text,
	"received_at" timestamp with time zone DEFAULT now() NOT NULL,
	"applied_at" timestamp with time zone,
	"outcome" text
);
--> statement-breakpoint
ALTER TABLE "billing_account" ADD CONSTRAINT "billing_account_organisation_id_organisation_id_fk" FOREIGN KEY ("organisation_id") REFERENCES "public"."organisation"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "stripe_event" ADD CONSTRAINT "stripe_event_organisation_id_organisation_id_fk" FOREIGN KEY ("organisation_id") REFERENCES "public"."organisation"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
CREATE UNIQUE INDEX "billing_account_customer_uq" ON "billing_account" USING btree ("stripe_customer_id");--> statement-breakpoint
CREATE INDEX "stripe_event_organisation_idx" ON "stripe_event" USING btree ("organisation_id","created");--> statement-breakpoint
-- hand-written below
ALTER TABLE "billing_account" ADD CONSTRAINT "billing_account_plan_ck" CHECK ("plan" IN ('trial', 'per_machine'));--> statement-breakpoint
ALTER TABLE "billing_account" ADD CONSTRAINT "billing_account_status_ck" CHECK ("status" IN ('trialing', 'active', 'past_due', 'unpaid', 'canceled'));
