/**
 * The digest a device computes for one window of a loop's samples (the Digest of the device API, app/.server/device-api/schemas.ts).
 * Pure and allocation-free per sample, so firmware can mirror it and the fleet simulator
 * uses exactly this code.
 *
 * oscCount follows Hägglund's load-disturbance detector (Hägglund 1995, "A control-loop
 * performance monitor", Control Eng. Practice 3 — from memory): integrate |e| between
 * successive zero crossings of the control error; each time the error crosses zero and the
 * integral since the previous crossing exceeds IAE_lim = 2a/ωu, one load disturbance is
 * counted. a is the acceptable error amplitude and ωu = 2π/Tu (Tu ≈ Ti when unknown). The
 * integral carries across windows; a detection belongs to the window where the crossing
 * happens.
 */

export type DigestStats = {
  samples: number;
  spMean: number;
  pvMean: number;
  errMean: number;
  errRms: number;
  errMaxAbs: number;
  iae: number;
  ise: number;
  uMean: number;
  uStd: number;
  satHighFrac: number;
  satLowFrac: number;
  intClampFrac: number;
  oscCount: number;
  spChanges: number;
};

export type DigestAccumulatorOptions = {
  /** Sample period h in seconds. */
  samplePeriod: number;
  /** Acceptable error amplitude a (process units). */
  acceptableAmplitude: number;
  /** Ultimate period Tu in seconds (ωu = 2π/Tu). */
  ultimatePeriod: number;
  /** Set-point moves smaller than this are not counted as changes. */
  setpointTolerance?: number;
};

/** IAE_lim = 2a/ωu with ωu = 2π/Tu. */
export function loadDisturbanceLimit(acceptableAmplitude: number, ultimatePeriod: number): number {
  const omegaU = (2 * Math.PI) / ultimatePeriod;
  return (2 * acceptableAmplitude) / omegaU;
}

export interface DigestAccumulator {
  /** One sample: set point, measurement, controller output and the controller's flags. */
  push(sp: number, pv: number, u: number, satHigh: boolean, satLow: boolean, integratorHeld: boolean): void;
  /** Statistics of the samples since the last flush (null when there were none); starts a new window. */
  flush(): DigestStats | null;
  readonly count: number;
}

export function createDigestAccumulator(options: DigestAccumulatorOptions): DigestAccumulator {
  const h = options.samplePeriod;
  if (!(h > 0) || !Number.isFinite(h)) throw new RangeError("samplePeriod must be a positive number");
  if (!(options.acceptableAmplitude > 0)) throw new RangeError("acceptableAmplitude must be positive");
  if (!(options.ultimatePeriod > 0)) throw new RangeError("ultimatePeriod must be positive");
  const limit = loadDisturbanceLimit(options.acceptableAmplitude, options.ultimatePeriod);
  const spTol = options.setpointTolerance ?? 1e-9;

  let n = 0;
  let spSum = 0;
  let pvSum = 0;
  let eSum = 0;
  let e2Sum = 0;
  let eMax = 0;
  let absSum = 0;
  let uSum = 0;
  let u2Sum = 0;
  let satHi = 0;
  let satLo = 0;
  let held = 0;
  let osc = 0;
  let spChanges = 0;
  // Carried across windows.
  let lastSp = Number.NaN;
  let lastSign = 0;
  let iaeSinceCrossing = 0;
  // Welford's running mean of u for a numerically stable standard deviation.
  let uMeanRun = 0;
  let uM2 = 0;

  return {
    get count() {
      return n;
    },
    push(sp, pv, u, satHigh, satLow, integratorHeld) {
      const e = sp - pv;
      n += 1;
      spSum += sp;
      pvSum += pv;
      eSum += e;
      e2Sum += e * e;
      const abs = e < 0 ? -e : e;
      if (abs > eMax) eMax = abs;
      absSum += abs;
      uSum += u;
      u2Sum += u * u;
      const delta = u - uMeanRun;
      uMeanRun += delta / n;
      uM2 += delta * (u - uMeanRun);
      if (satHigh) satHi += 1;
      if (satLow) satLo += 1;
      if (integratorHeld) held += 1;
      if (!Number.isNaN(lastSp) && Math.abs(sp - lastSp) > spTol) spChanges += 1;
      lastSp = sp;
      const sign = e > 0 ? 1 : e < 0 ? -1 : 0;
      if (sign !== 0 && lastSign !== 0 && sign !== lastSign) {
        if (iaeSinceCrossing > limit) osc += 1;
        iaeSinceCrossing = 0;
      }
      if (sign !== 0) lastSign = sign;
      iaeSinceCrossing += abs * h;
    },
    flush() {
      if (n === 0) return null;
      const stats: DigestStats = {
        samples: n,
        spMean: spSum / n,
        pvMean: pvSum / n,
        errMean: eSum / n,
        errRms: Math.sqrt(e2Sum / n),
        errMaxAbs: eMax,
        iae: absSum * h,
        ise: e2Sum * h,
        uMean: uSum / n,
        uStd: Math.sqrt(Math.max(0, uM2 / n)),
        satHighFrac: satHi / n,
        satLowFrac: satLo / n,
        intClampFrac: held / n,
        oscCount: osc,
        spChanges,
      };
      n = spSum = pvSum = eSum = e2Sum = eMax = absSum = uSum = u2Sum = satHi = satLo = held = osc = spChanges = 0;
      uMeanRun = uM2 = 0;
      return stats;
    },
  };
}
