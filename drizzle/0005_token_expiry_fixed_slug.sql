ALTER TABLE "api_token" ADD COLUMN "expires_at" timestamp with time zone;--> statement-breakpoint
-- An organisation's slug names it in device configurations (issuer flyball:<slug>) and in the
-- JWKS address enrolled devices keep: once created it never changes.
CREATE OR REPLACE FUNCTION flyball_keep_organisation_slug() RETURNS trigger LANGUAGE plpgsql AS $$
BEGIN
  IF NEW.slug IS DISTINCT FROM OLD.slug THEN
    RAISE EXCEPTION 'an organisation''s slug cannot be changed' USING ERRCODE = 'check_violation';
  END IF;
  RETURN NEW;
END $$;--> statement-breakpoint
CREATE TRIGGER organisation_slug_fixed BEFORE UPDATE OF slug ON "organisation" FOR EACH ROW EXECUTE FUNCTION flyball_keep_organisation_slug();
