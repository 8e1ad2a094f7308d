// Draft gain sets saved from the tuning bench: versioned per loop template, inside the
// template's safety envelope, scoped to the organisation, refused to roles that cannot tune.
import { and, eq } from "drizzle-orm";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { gainSet, loopTemplate, organisation } from "~/.server/db/schema";
import { postForm, signIn, type Session } from "../support/http";
import { closeDb, db } from "../support/db";

afterAll(closeDb);

let engineer: Session;
let template: { id: string; key: string; envelope: { kp: [number, number]; ki: [number, number]; kd: [number, number] } };
let foreignTemplateId: string;

beforeAll(async () => {
  engineer = await signIn("engineer@corvid.example");
  const templatesOf = async (slug: string) =>
    db()
      .select({ id: loopTemplate.id, key: loopTemplate.key, envelope: loopTemplate.gainEnvelope })
      .from(loopTemplate)
      .innerJoin(organisation, eq(organisation.id, loopTemplate.organisationId))
      .where(eq(organisation.slug, slug));
  [template] = (await templatesOf("corvid")) as [typeof template];
  foreignTemplateId = (await templatesOf("pellworth"))[0]!.id;
});

const inside = () => ({
  form: "parallel" as const,
  kp: (template.envelope.kp[0] + template.envelope.kp[1]) / 2,
  ki: (template.envelope.ki[0] + template.envelope.ki[1]) / 2,
  kd: template.envelope.kd[0],
});

function save(draft: unknown, session = engineer) {
  return postForm("/o/corvid/bench", { draft: JSON.stringify(draft) }, session);
}

async function draftsOf(templateId: string) {
  return db().select().from(gainSet).where(and(eq(gainSet.loopTemplateId, templateId)));
}

describe("saving a draft gain set from the bench", () => {
  it("stores versions 1, 2 … per template in parallel form with its origin", async () => {
    const before = (await draftsOf(template.id)).length;
    const first = await save({ templateId: template.id, gains: inside(), filterN: 10, origin: { rule: "simc", controller: "PI", model: { gain: 2, timeConstant: 10, deadTime: 2 }, figures: { gainMargin: 3.1 } }, note: "from the bench" });
    expect(first.status).toBe(200);
    const second = await save({ templateId: template.id, gains: inside() });
    expect(second.status).toBe(200);
    const rows = (await draftsOf(template.id)).sort((a, b) => a.version - b.version);
    expect(rows).toHaveLength(before + 2);
    expect(rows.at(-2)!.version + 1).toBe(rows.at(-1)!.version);
    expect(rows.at(-2)!.state).toBe("draft");
    expect(rows.at(-2)!.origin.rule).toBe("simc");
    expect(rows.at(-2)!.gains.kp).toBeCloseTo(inside().kp, 10);
  });

  it("converts standard-form gains exactly (app/lib/control/REFERENCES.md conventions: ki = Kc/Ti, kd = Kc·Td)", async () => {
    const { kp, ki } = inside();
    const response = await save({ templateId: template.id, gains: { form: "standard", kc: kp, ti: kp / ki, td: 0 } });
    expect(response.status).toBe(200);
    const latest = (await draftsOf(template.id)).sort((a, b) => b.version - a.version)[0]!;
    expect(latest.gains.ki).toBeCloseTo(ki, 10);
  });

  it("refuses gains outside the safety envelope and stores nothing", async () => {
    const before = (await draftsOf(template.id)).length;
    const response = await save({ templateId: template.id, gains: { ...inside(), kp: template.envelope.kp[1] * 10 + 1 } });
    expect(response.status).toBe(400);
    expect(await response.text()).toContain("outside the safety envelope");
    expect(await draftsOf(template.id)).toHaveLength(before);
  });

  it("answers 404 for another organisation's template and 400 for malformed drafts", async () => {
    const foreignBefore = (await draftsOf(foreignTemplateId)).length;
    expect((await save({ templateId: foreignTemplateId, gains: inside() })).status).toBe(404);
    expect(await draftsOf(foreignTemplateId)).toHaveLength(foreignBefore);
    expect((await postForm("/o/corvid/bench", { draft: "{not json" }, engineer)).status).toBe(400);
    expect((await save({ templateId: template.id, gains: { form: "parallel", kp: "NaN", ki: 0, kd: 0 } })).status).toBe(400);
    expect((await save({ templateId: template.id, gains: inside(), extra: 1 })).status).toBe(400);
  });

  it("refuses a viewer with 403", async () => {
    const viewer = await signIn("viewer@corvid.example");
    const before = (await draftsOf(template.id)).length;
    expect((await save({ templateId: template.id, gains: inside() }, viewer)).status).toBe(403);
    expect(await draftsOf(template.id)).toHaveLength(before);
  });
});
