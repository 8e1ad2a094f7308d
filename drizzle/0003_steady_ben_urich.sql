CREATE TABLE "gain_set" (
	"organisation_id" text NOT NULL,
	"id" uuid DEFAULT gen_random_uuid() NOT NULL,
	"loop_template_id" uuid NOT NULL,
	"version" integer NOT NULL,
	"state" text DEFAULT 'draft' NOT NULL,
	"gains" jsonb NOT NULL,
	"filter_n" double precision,
	"origin" jsonb NOT NULL,
	"note" text DEFAULT '' NOT NULL,
	"created_by" text NOT NULL,
	"created_at" timestamp with time zone DEFAULT now() NOT NULL,
	CONSTRAINT "gain_set_pk" PRIMARY KEY("organisation_id","id")
);
--> statement-breakpoint
ALTER TABLE "gain_set" ADD CONSTRAINT "gain_set_organisation_id_organisation_id_fk" FOREIGN KEY ("organisation_id") REFERENCES "public"."organisation"("id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
ALTER TABLE "gain_set" ADD CONSTRAINT "gain_set_template_fk" FOREIGN KEY ("organisation_id","loop_template_id") REFERENCES "public"."loop_template"("organisation_id","id") ON DELETE cascade ON UPDATE no action;--> statement-breakpoint
CREATE UNIQUE INDEX "gain_set_organisation_template_version_uq" ON "gain_set" USING btree ("organisation_id","loop_template_id","version");--> statement-breakpoint
CREATE INDEX "gain_set_organisation_state_idx" ON "gain_set" USING btree ("organisation_id","state");