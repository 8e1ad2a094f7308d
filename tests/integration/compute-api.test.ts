// The compute API over HTTP: published check values (app/lib/control/REFERENCES.md) and hostile input.
import { beforeAll, describe, expect, it } from "vitest";
import { APP_URL, postJson, signIn, type Session } from "../support/http";

let session: Session;
beforeAll(async () => {
  session = await signIn("engineer@corvid.example");
});

async function compute(path: string, body: unknown) {
  const response = await postJson(`/api/v1/compute/${path}`, body, session);
  return { status: response.status, body: (await response.json()) as any };
}

/** Exact FOPDT step response K(1 − e^{−(t−θ)/τ}) to a unit step at t = 0, sampled every `h`. */
function fopdtStepTest(K: number, tau: number, theta: number, h = 0.02, end = 200) {
  const t: number[] = [], u: number[] = [], y: number[] = [];
  for (let k = 0; k * h <= end + 1e-9; k++) {
    const time = k * h - 5; // five seconds of rest before the step
    t.push(Number((k * h).toFixed(10)));
    u.push(time >= 0 ? 1 : 0);
    y.push(time > theta ? K * (1 - Math.exp(-(time - theta) / tau)) : 0);
  }
  return { t, u, y };
}

const cubicLag = { type: "tf", numerator: [1], denominator: [1, 3, 3, 1] };

describe("POST /api/v1/compute/margins", () => {
  it("gives GM exactly 2 for Ziegler–Nichols P control (Kc = Ku/2 = 4) on 1/(s+1)^3", async () => {
    // app/lib/control/REFERENCES.md closed-form facts (derived): Ku = 8, ωu = √3 for 1/(s+1)^3.
    const { status, body } = await compute("margins", { plant: cubicLag, controller: { form: "standard", kc: 4, ti: null, td: 0 } });
    expect(status).toBe(200);
    expect(Object.keys(body).sort()).toEqual(["delayMargin", "gainCrossoverFrequency", "gainMargin", "peakSensitivity", "phaseCrossoverFrequency", "phaseMargin", "stable"]);
    expect(body.stable).toBe(true);
    expect(body.gainMargin).toBeCloseTo(2, 4);
    expect(body.phaseCrossoverFrequency).toBeCloseTo(Math.sqrt(3), 4);
    // GM ≥ Ms/(Ms − 1) (app/lib/control/REFERENCES.md margins, published inequality)
    expect(body.gainMargin).toBeGreaterThanOrEqual(body.peakSensitivity / (body.peakSensitivity - 1) - 1e-9);
  });

  it("answers stable false and a null Ms for unstable loops (app/lib/control/REFERENCES.md, derived)", async () => {
    // FOPDT K=1, τ=1, θ=1 under P kp=5 > Ku = 2.2611; FOPDT τ=0.01 with PI Kc=0.5, Ti=0.01 at h=1.
    const a = await compute("margins", { plant: { type: "fopdt", gain: 1, timeConstant: 1, deadTime: 1 }, controller: { form: "parallel", kp: 5, ki: 0, kd: 0 } });
    expect(a.status).toBe(200);
    expect(a.body.stable).toBe(false);
    expect(a.body.peakSensitivity).toBeNull();
    const b = await compute("margins", { plant: { type: "fopdt", gain: 1, timeConstant: 0.01, deadTime: 0 }, controller: { form: "standard", kc: 0.5, ti: 0.01, td: 0 }, samplePeriod: 1 });
    expect(b.body.stable).toBe(false);
    expect(b.body.peakSensitivity).toBeNull();
    // 2(s+2)²/s³ under P=1: GM 0.5, yet the closed-loop poles −1.1397, −0.4302 ± 2.6143j are stable.
    const c = await compute("margins", { plant: { type: "tf", numerator: [2, 8, 8], denominator: [1, 0, 0, 0] }, controller: { form: "parallel", kp: 1, ki: 0, kd: 0 } });
    expect(c.body.stable).toBe(true);
    expect(c.body.gainMargin).toBeCloseTo(0.5, 6);
  });

  it("answers null margins where there is no crossover", async () => {
    // A first-order lag under small P control never reaches −180° and |L| < 1 everywhere.
    const { status, body } = await compute("margins", { plant: { type: "fopdt", gain: 1, timeConstant: 1, deadTime: 0 }, controller: { form: "parallel", kp: 0.5, ki: 0, kd: 0 } });
    expect(status).toBe(200);
    expect(body.gainMargin).toBeNull();
    expect(body.phaseMargin).toBeNull();
  });
});

describe("POST /api/v1/compute/tune", () => {
  it("gives Ziegler–Nichols PID 4.8 / 1.8138 / 0.4534 from Ku 8, Pu 3.627599", async () => {
    // Ziegler & Nichols 1942 (memory): PID 0.6Ku, Pu/2, Pu/8 — app/lib/control/REFERENCES.md check (derived).
    const { status, body } = await compute("tune", { ultimate: { ku: 8, pu: 2 * Math.PI / Math.sqrt(3) }, rule: "ziegler-nichols", controller: "pid" });
    expect(status).toBe(200);
    expect(body.rule).toBe("ziegler-nichols");
    expect(body.controller).toBe("pid");
    expect(body.standard.kc).toBeCloseTo(4.8, 4);
    expect(body.standard.ti).toBeCloseTo(1.8138, 4);
    expect(body.standard.td).toBeCloseTo(0.4534, 4);
    expect(body.parallel.kp).toBeCloseTo(4.8, 4);
    expect(body.parallel.ki).toBeCloseTo(4.8 / 1.813799, 3);
    expect(body.parallel.kd).toBeCloseTo(4.8 * 0.45345, 3);
    expect(body.series).toBeDefined(); // Ti = 4Td exactly: a real series factorisation exists
  });

  it("gives SIMC PI Kc 5, τI 8 for K 1, τ 10, θ 1 (Skogestad 2003, derived)", async () => {
    const { body } = await compute("tune", { model: { type: "fopdt", gain: 1, timeConstant: 10, deadTime: 1 }, rule: "simc", controller: "pi" });
    expect(body.standard.kc).toBeCloseTo(5, 6);
    expect(body.standard.ti).toBeCloseTo(8, 6);
    expect(body.standard.td).toBe(0);
  });

  it("gives IMC-PID 1.8333 / 11 / 0.9091 with λ 2 for K 2, τ 10, θ 2 (Rivera, Morari & Skogestad 1986, derived)", async () => {
    const { body } = await compute("tune", { model: { type: "fopdt", gain: 2, timeConstant: 10, deadTime: 2 }, rule: "imc", controller: "pid", closedLoopTimeConstant: 2 });
    expect(body.standard.kc).toBeCloseTo(1.8333, 4);
    expect(body.standard.ti).toBeCloseTo(11, 6);
    expect(body.standard.td).toBeCloseTo(0.9091, 4);
  });

  it("answers ti null for a P controller", async () => {
    const { body } = await compute("tune", { model: { type: "fopdt", gain: 2, timeConstant: 10, deadTime: 2 }, rule: "ziegler-nichols-step", controller: "p" });
    expect(body.standard.ti).toBeNull();
    expect(body.standard.kc).toBeCloseTo(2.5, 6); // 1/a with a = Kθ/τ = 0.4
  });

  it("refuses a rule that needs a model when only Ku, Pu are given", async () => {
    const { status, body } = await compute("tune", { ultimate: { ku: 8, pu: 3.6 }, rule: "simc", controller: "pi" });
    expect(status).toBe(400);
    expect(body.error.message).toContain("rule");
  });
});

describe("POST /api/v1/compute/identify", () => {
  const data = fopdtStepTest(2, 10, 2);

  it("gives Smith's (τ, θ) = (10.0049, 1.9918) on exact FOPDT data (app/lib/control/REFERENCES.md, derived)", async () => {
    const { status, body } = await compute("identify", { samples: data, method: "smith" });
    expect(status).toBe(200);
    expect(body.model.type).toBe("fopdt");
    expect(body.model.timeConstant).toBeCloseTo(10.0049, 2);
    expect(body.model.deadTime).toBeCloseTo(1.9918, 2);
    expect(body.fit.r2).toBeGreaterThan(0.999);
  });

  it("recovers K, τ, θ within 1 % by least squares, from JSON and from a CSV upload", async () => {
    const { body } = await compute("identify", { samples: data, method: "least-squares" });
    expect(Math.abs(body.model.gain / 2 - 1)).toBeLessThan(0.01);
    expect(Math.abs(body.model.timeConstant / 10 - 1)).toBeLessThan(0.01);
    expect(Math.abs(body.model.deadTime / 2 - 1)).toBeLessThan(0.01);

    const csv = ["t,u,y", ...data.t.map((t, i) => `${t},${data.u[i]},${data.y[i]}`)].join("\n");
    const form = new FormData();
    form.set("file", new File([csv], "step.csv", { type: "text/csv" }));
    form.set("method", "least-squares");
    const response = await fetch(`${APP_URL}/api/v1/compute/identify`, { method: "POST", body: form, headers: { cookie: session.cookie, origin: APP_URL } });
    expect(response.status).toBe(200);
    const fromCsv = (await response.json()) as any;
    expect(fromCsv.model.timeConstant).toBeCloseTo(body.model.timeConstant, 6);
  });

  it("refuses data with no step, too few samples, non-monotonic time, and a CSV without a header", async () => {
    const flat = { t: data.t, u: data.t.map(() => 1), y: data.y };
    expect((await compute("identify", { samples: flat, method: "smith" })).body.error.message).toMatch(/no step/);
    const few = { t: [0, 1, 2], u: [0, 1, 1], y: [0, 0.5, 0.8] };
    expect((await compute("identify", { samples: few, method: "least-squares" })).status).toBe(400);
    const backwards = { ...data, t: data.t.map((t, i) => (i === 100 ? 0 : t)) };
    const refused = await compute("identify", { samples: backwards, method: "least-squares" });
    expect(refused.status).toBe(400);
    expect(refused.body.error.message).toMatch(/^t: .*increase/);

    const form = new FormData();
    form.set("file", new File(["0,0,0\n1,1,0.5\n"], "step.csv"));
    const response = await fetch(`${APP_URL}/api/v1/compute/identify`, { method: "POST", body: form, headers: { cookie: session.cookie, origin: APP_URL } });
    expect(response.status).toBe(400);
    expect(((await response.json()) as any).error.message).toContain("header");
  });

  it("refuses a CSV over 5 MB with 413", async () => {
    const big = "t,u,y\n" + "1.000000000,1.000000000,1.000000000\n".repeat(150_000);
    const form = new FormData();
    form.set("file", new File([big], "big.csv"));
    const response = await fetch(`${APP_URL}/api/v1/compute/identify`, { method: "POST", body: form, headers: { cookie: session.cookie, origin: APP_URL } });
    expect(response.status).toBe(413);
  });
});

describe("POST /api/v1/compute/simulate and step-info", () => {
  it("simulates a PI loop that settles on the set point", async () => {
    const { status, body } = await compute("simulate", {
      plant: { type: "fopdt", gain: 1, timeConstant: 10, deadTime: 1 },
      controller: { form: "standard", kc: 5, ti: 8, td: 0, outputLimits: [-10, 10], antiWindup: "clamp" },
      samplePeriod: 0.1,
      duration: 100,
      setpoint: 1,
      loadStep: { time: 60, value: -0.5 },
    });
    expect(status).toBe(200);
    expect(body.t).toHaveLength(1001);
    expect(body.y[1000]).toBeCloseTo(1, 2);
    expect(body.metrics.iae).toBeGreaterThan(0);
    expect(body.metrics.overshootPercent).toBeGreaterThanOrEqual(0);
    expect(body.diverged).toBe(false);
    expect(body.divergedAt).toBeNull();
  });

  it("flags a diverging run with the time it left the finite numbers", async () => {
    // FOPDT (1, 1, 1), PI kp=5, ki=1, h=0.01 (1500 s: the 2000 s is past the 200 000-sample
    // limit): u is first non-finite at 1100.60 s (derived by simulation, app/lib/control/simulate.test.ts).
    const { status, body } = await compute("simulate", {
      plant: { type: "fopdt", gain: 1, timeConstant: 1, deadTime: 1 },
      controller: { form: "parallel", kp: 5, ki: 1, kd: 0 },
      samplePeriod: 0.01,
      duration: 1500,
    });
    expect(status).toBe(200);
    expect(body.diverged).toBe(true);
    expect(body.divergedAt).toBeCloseTo(1100.6, 6);
    expect(body.y).toHaveLength(110_060);
  });

  it("answers 400 too_large for work past about a second, and a huge dead time runs in little memory", async () => {
    const order20 = { type: "tf", numerator: [1], denominator: [1, ...new Array(19).fill(0), 1] };
    const big = await compute("simulate", { plant: order20, controller: { form: "parallel", kp: 0.01, ki: 0, kd: 0 }, samplePeriod: 0.01, duration: 1999 });
    expect(big.status).toBe(400);
    expect(big.body.error.code).toBe("too_large");
    const margins = await compute("margins", { plant: { type: "sopdt", gain: 1, timeConstants: [1, 2], deadTime: 1e7 }, controller: { form: "parallel", kp: 1, ki: 0, kd: 0 }, samplePeriod: 0.01 });
    expect(margins.status).toBe(400);
    expect(margins.body.error.code).toBe("too_large");
    // θ/h = 1e9: the delay line is capped at the 3 samples simulated.
    const deep = await compute("simulate", { plant: { type: "sopdt", gain: 1, timeConstants: [1, 2], deadTime: 1e7 }, controller: { form: "parallel", kp: 1, ki: 0, kd: 0 }, samplePeriod: 0.01, duration: 0.02 });
    expect(deep.status).toBe(200);
    expect(deep.body.y).toEqual([0, 0, 0]);
  });

  it("gives 16.3034 % overshoot for ζ 0.5, ωn 1 (any control textbook: exp(−ζπ/√(1−ζ²)))", async () => {
    const { status, body } = await compute("step-info", { plant: { type: "tf", numerator: [1], denominator: [1, 1, 1] }, duration: 30 });
    expect(status).toBe(200);
    expect(body.overshootPercent).toBeCloseTo(16.3034, 2);
    expect(body.peakTime).toBeCloseTo(3.627599, 1);
    expect(body.steadyState).toBeCloseTo(1, 6);
  });
});

describe("bad input to the compute API", () => {
  const plant = { type: "fopdt", gain: 1, timeConstant: 10, deadTime: 1 };
  const controller = { form: "parallel", kp: 1, ki: 0.1, kd: 0 };

  it.each([
    ["a negative time constant", "margins", { plant: { ...plant, timeConstant: -1 }, controller }, "plant.timeConstant"],
    ["NaN written as a string", "margins", { plant: { ...plant, gain: "NaN" }, controller }, "plant.gain"],
    ["an unknown field", "margins", { plant, controller, colour: "red" }, "colour"],
    ["an unknown plant type", "step-info", { plant: { type: "magic" } }, "plant"],
    ["a denominator of lower degree than the numerator", "step-info", { plant: { type: "tf", numerator: [1, 0, 0], denominator: [1, 1] } }, "plant.denominator"],
    ["empty coefficient arrays", "step-info", { plant: { type: "tf", numerator: [], denominator: [1, 1] } }, "plant.numerator"],
    ["empty sample arrays", "identify", { samples: { t: [], u: [], y: [] }, method: "smith" }, "samples.t"],
    ["arrays of different lengths", "identify", { samples: { t: [0, 1], u: [0], y: [0, 1] }, method: "smith" }, "samples.u"],
    ["more than 200 000 samples", "simulate", { plant, controller, samplePeriod: 0.001, duration: 1000 }, "duration"],
    ["more than 200 000 identification samples", "identify", { samples: { t: new Array(200_001).fill(0), u: [0], y: [0] }, method: "smith" }, "samples.t"],
    ["a missing rule", "tune", { model: plant, controller: "pi" }, "rule"],
    ["output limits the wrong way round", "simulate", { plant, controller: { ...controller, outputLimits: [1, 0] }, samplePeriod: 0.1, duration: 10 }, "controller.outputLimits"],
  ])("answers 400 naming the field for %s", async (_label, path, body, field) => {
    const { status, body: answer } = await compute(path, body);
    expect(status).toBe(400);
    expect(answer.error.code).toBeTruthy();
    expect(answer.error.message).toContain(field);
  });

  it("answers 400 for a body that is not JSON, 405 for GET and 401 without a session", async () => {
    expect((await postJson("/api/v1/compute/margins", "{not json", session)).status).toBe(400);
    expect((await fetch(`${APP_URL}/api/v1/compute/margins`, { headers: { cookie: session.cookie } })).status).toBe(405);
    expect((await postJson("/api/v1/compute/margins", { plant, controller })).status).toBe(401);
  });

  it("never answers 500 for hostile values", async () => {
    const hostile = [
      { plant: { type: "tf", numerator: [1e308], denominator: [1e-308, 1] }, controller },
      { plant: { ...plant, timeConstant: 1e-300 }, controller },
      { plant: { ...plant, deadTime: 1e12 }, controller },
      { plant: { type: "ipdt", gain: 1, deadTime: 0 }, controller: { form: "parallel", kp: 1e300, ki: 1e300, kd: 1e300 } },
      { plant: { type: "tf", numerator: [0, 1], denominator: [0, 1, 1] }, controller },
      [],
      null,
      "text",
    ];
    for (const body of hostile) {
      const { status } = await compute("margins", body);
      expect(status, JSON.stringify(body)).toBeLessThan(500);
    }
  });
});
