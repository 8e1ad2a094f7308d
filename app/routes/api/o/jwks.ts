// GET /api/v1/o/:slug/jwks.json: public keys that sign this organisation's device configurations.
import { getDb } from "~/.server/db/client";
import { getOrganisationJwks } from "~/.server/device-auth/signing-keys";
import { apiError, jsonResponse } from "~/.server/http/json";
import type { Route } from "./+types/jwks";

export async function loader({ params }: Route.LoaderArgs) {
  const jwks = await getOrganisationJwks(getDb(), params.slug);
  if (!jwks) return apiError(404, "not_found", "No such organisation.");
  return jsonResponse(jwks, 200, { "cache-control": "public, max-age=300" });
}
