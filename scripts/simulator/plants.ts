// The simulated plants behind each loop template, and how they age (invented demo physics).
// One small module owns the plant + controller step, using the control engine.
import { createPidController, createPlantSimulator, createRandomSource, discretisePlant, type PidStepper, type PlantSimulator } from "~/lib/control";
import { createDigestAccumulator, type DigestAccumulator, type DigestStats } from "~/lib/health";

export type PlantSpec = {
  /** Process value when the actuator is at 0 (ambient temperature, zero speed …). */
  base: number;
  gain: number;
  timeConstant: number;
  deadTime: number;
  setpoint: number;
  noise: number;
  /** Size of an occasional load step, in process units. */
  loadStep: number;
};

const SPECS: Record<string, PlantSpec> = {
  zone: { base: 25, gain: 1.2, timeConstant: 300, deadTime: 20, setpoint: 215, noise: 0.15, loadStep: 6 },
  screw_speed: { base: 0, gain: 1.5, timeConstant: 2, deadTime: 0.2, setpoint: 72, noise: 0.2, loadStep: 6 },
  melt_pressure: { base: 0, gain: 4, timeConstant: 5, deadTime: 0.5, setpoint: 190, noise: 0.8, loadStep: 15 },
  flow: { base: 0, gain: 2, timeConstant: 1.5, deadTime: 0.3, setpoint: 110, noise: 0.3, loadStep: 8 },
  pressure: { base: 0, gain: 0.1, timeConstant: 3, deadTime: 0.5, setpoint: 6, noise: 0.02, loadStep: 0.5 },
};

export function plantSpecFor(key: string): PlantSpec {
  return SPECS[key.startsWith("zone_") ? "zone" : key] ?? SPECS.screw_speed;
}

/** How one machine ages: per-day rates, seeded from its serial so a restart continues the story. */
export type Ageing = { heaterWearPerDay: number; foulingPerDay: number; loadStepsPerHour: number; sticky: boolean };

export function ageingFor(serial: string, index: number): Ageing {
  let h = 2166136261;
  for (const c of serial) h = Math.imul(h ^ c.charCodeAt(0), 16777619) >>> 0;
  const r = (h % 1000) / 1000;
  return {
    // A handful of lines wear their heaters fast enough to run into saturation within the month:
    // a zone needs (215 − 25)/(1.2 · wear) counts of 255, so it saturates once wear < 0.62,
    // i.e. after 28 days at 1.35 % a day (0.011 stayed short of it for the whole month).
    heaterWearPerDay: index % 7 === 3 ? 0.0135 : 0.002 + 0.004 * r,
    foulingPerDay: index % 5 === 1 ? 0.05 : 0.01 * r,
    loadStepsPerHour: 0.5 + 2 * r,
    // One line has a sticking actuator that makes its loop oscillate.
    sticky: index === 5,
  };
}

export type LoopTemplateInfo = { key: string; samplePeriodS: number; outputMin: number; outputMax: number; thresholds: { acceptableAmplitude: number; ultimatePeriod: number } };
export type Gains = { kp: number; ki: number; kd: number };

/** One loop: plant, PID controller and digest accumulator, advanced sample by sample. */
export class LoopSim {
  readonly spec: PlantSpec;
  private plant!: PlantSimulator;
  private pid!: PidStepper;
  private readonly acc: DigestAccumulator;
  private readonly rng;
  private disturbance = 0;
  private held = 0;
  private day = -1;
  private gains: Gains;
  gainVersion = 0;

  constructor(
    readonly template: LoopTemplateInfo,
    gains: Gains,
    readonly ageing: Ageing,
    seed: number,
  ) {
    this.spec = plantSpecFor(template.key);
    this.gains = gains;
    this.rng = createRandomSource(seed);
    this.acc = createDigestAccumulator({ samplePeriod: template.samplePeriodS, acceptableAmplitude: template.thresholds.acceptableAmplitude, ultimatePeriod: template.thresholds.ultimatePeriod });
  }

  private steadyInput(day: number): number {
    return (this.spec.setpoint - this.spec.base) / this.effectiveGain(day);
  }

  private effectiveGain(day: number): number {
    const wear = this.template.key.startsWith("zone_") ? Math.max(0.4, 1 - this.ageing.heaterWearPerDay * day) : 1;
    return this.spec.gain * wear;
  }

  private timeConstant(day: number): number {
    const fouling = this.template.key === "melt_pressure" || this.template.key === "flow" ? 1 + this.ageing.foulingPerDay * day : 1;
    return this.spec.timeConstant * fouling;
  }

  private discreteFor(day: number) {
    return discretisePlant({ type: "fopdt", gain: 1, timeConstant: this.timeConstant(day), deadTime: this.spec.deadTime }, this.template.samplePeriodS);
  }

  /**
   * Age the plant to `day` (fouling stretches the time constant, read once per whole day).
   * The first call starts the loop at rest on its set point; later calls change the plant
   * in place, so the process value, the delay line and the controller carry straight on
   * across the day boundary (a reset there made a false error spike at every day start).
   */
  setAge(day: number) {
    const whole = Math.floor(day);
    if (whole === this.day) return;
    const first = this.day < 0;
    this.day = whole;
    const discrete = this.discreteFor(whole);
    if (!first) {
      this.plant.changeModel(discrete);
      return;
    }
    const u0 = Math.min(this.template.outputMax, this.steadyInput(whole));
    const input = u0 * this.effectiveGain(whole);
    this.plant = createPlantSimulator(discrete, input);
    this.pid = createPidController({
      gains: { form: "parallel", ...this.gains },
      samplePeriod: this.template.samplePeriodS,
      outputLimits: { min: this.template.outputMin, max: this.template.outputMax },
      antiWindup: "clamp",
      initialIntegral: Math.max(this.template.outputMin, Math.min(this.template.outputMax, u0)),
    });
    this.held = u0;
    // Start at rest: run the plant to steady state on the held input (cheap for an FOPDT);
    // 12 time constants leave e^(−12) ≈ 6·10⁻⁶ of the step, far below the noise.
    const settle = Math.ceil((12 * this.timeConstant(whole) + this.spec.deadTime) / this.template.samplePeriodS);
    for (let i = 0; i < settle; i++) this.plant.advance(input);
  }

  /** New gains take effect bumplessly: the PID keeps its output at the switch (PidStepper.setGains). */
  applyGains(gains: Gains, version: number) {
    this.gains = gains;
    this.gainVersion = version;
    this.pid?.setGains({ form: "parallel", ...gains });
  }

  /** Run `seconds` of operation and return the window's digest statistics. */
  run(seconds: number, day: number): DigestStats {
    this.setAge(day);
    const h = this.template.samplePeriodS;
    const n = Math.max(1, Math.round(seconds / h));
    const k = this.effectiveGain(day);
    const stepChance = (this.ageing.loadStepsPerHour * h) / 3600;
    const stickBand = (this.template.outputMax - this.template.outputMin) * 0.04;
    for (let i = 0; i < n; i++) {
      if (this.rng.nextUniform() < stepChance) this.disturbance = (this.rng.nextUniform() - 0.5) * 2 * this.spec.loadStep;
      const y = this.spec.base + this.plant.output() + this.disturbance + this.spec.noise * this.rng.nextNormal();
      const u = this.pid.step(this.spec.setpoint, y);
      // A sticking actuator moves only once the command has moved far enough from where it stuck.
      if (!this.ageing.sticky || Math.abs(u - this.held) > stickBand) this.held = u;
      this.plant.advance(this.held * k);
      this.acc.push(this.spec.setpoint, y, u, this.pid.saturatedHigh, this.pid.saturatedLow, this.pid.integratorHeld);
    }
    return this.acc.flush()!;
  }
}
