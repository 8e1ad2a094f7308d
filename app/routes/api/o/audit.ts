// GET /api/v1/o/:slug/audit?from=&to=&actorId=&action=&page=&pageSize= → {items, total, page, pageSize}
// GET /api/v1/o/:slug/audit?format=csv&… → text/csv (the filtered log, newest first)
import { exportAuditCsv, listAuditEvents } from "~/.server/audit/audit-log";
import { getDb } from "~/.server/db/client";
import { requireApiCaller } from "~/.server/fleet/api-auth";
import { searchParams } from "~/.server/fleet/query";
import { handleApi } from "~/.server/http/errors";
import { apiError, methodNotAllowed, zodIssues } from "~/.server/http/json";
import { AuditQuerySchema } from "~/lib/gain-sets/schemas";
import type { Route } from "./+types/audit";

export function loader({ request, params }: Route.LoaderArgs) {
  return handleApi(async () => {
    const caller = await requireApiCaller(request, params.slug, "audit:read");
    const query = AuditQuerySchema.safeParse(searchParams(request));
    if (!query.success) return apiError(400, "invalid_query", "Check the query parameters.", zodIssues(query.error));
    const scope = { organisationId: caller.scope.organisationId };
    if (query.data.format === "csv") {
      const csv = await exportAuditCsv(getDb(), scope, query.data);
      return new Response(csv, {
        headers: {
          "content-type": "text/csv; charset=utf-8",
          "content-disposition": `attachment; filename="audit-${caller.organisation.slug}.csv"`,
          "cache-control": "no-store",
        },
      });
    }
    return listAuditEvents(getDb(), scope, query.data);
  });
}

export const action = () => methodNotAllowed("GET");
