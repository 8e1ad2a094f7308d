ALTER TABLE "digest_seq" DROP CONSTRAINT "digest_seq_loop_fk";
--> statement-breakpoint
-- Hand-written: a deleted loop's claims go with it (the foreign key's cascade did this before;
-- see app/.server/db/schema/digests.ts for why the key was dropped).
CREATE OR REPLACE FUNCTION flyball_forget_digest_claims() RETURNS trigger
LANGUAGE plpgsql AS $$
BEGIN
  DELETE FROM digest_seq s USING gone_loop g WHERE s.organisation_id = g.organisation_id AND s.loop_id = g.id;
  RETURN NULL;
END $$;
--> statement-breakpoint
CREATE TRIGGER loop_forget_digest_claims AFTER DELETE ON loop REFERENCING OLD TABLE AS gone_loop
  FOR EACH STATEMENT EXECUTE FUNCTION flyball_forget_digest_claims();
