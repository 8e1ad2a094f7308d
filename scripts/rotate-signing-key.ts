// Rotate an organisation's config-signing key: `npm run keys:rotate -- <slug>`. The new key
// signs from now on (each app process within a minute); the old one stays in the JWKS for the
// overlap, then the `device.withdraw-signing-keys` job withdraws it.
//   npm run keys:rotate -- corvid              rotate
//   npm run keys:rotate -- --withdraw-now      withdraw every retired key at once (overlap 0)
import { eq } from "drizzle-orm";
import { closeDb, getDb } from "~/.server/db/client";
import { organisation } from "~/.server/db/schema";
import { rotateSigningKey, withdrawRetiredSigningKeys } from "~/.server/device-auth/signing-keys";

async function main() {
  const args = process.argv.slice(2);
  if (args.includes("--withdraw-now")) {
    console.log(`withdrew ${await withdrawRetiredSigningKeys(getDb(), { overlapMs: 0 })} retired key(s)`);
    return;
  }
  const slug = args[0];
  if (!slug) throw new Error("usage: npm run keys:rotate -- <organisation slug> | --withdraw-now");
  const [org] = await getDb().select({ id: organisation.id }).from(organisation).where(eq(organisation.slug, slug));
  if (!org) throw new Error(`no organisation "${slug}"`);
  const { kid, retired } = await rotateSigningKey(getDb(), { organisationId: org.id, actor: "system" });
  console.log(`${slug}: new signing key ${kid}; retired ${retired.join(", ") || "none"} (published until the overlap ends)`);
}

main()
  .catch((error) => {
    console.error(error.message);
    process.exitCode = 1;
  })
  .finally(() => closeDb());
