// The invented demo scenario (README.md, "Demo sign-ins"). Names, sites and people are made up.
import type { Role } from "~/lib/access/capabilities";
import { oscillationLimitPerHour } from "~/lib/health";

export const DEMO_PASSWORD = "flyball-demo";

export type DemoOrganisation = {
  name: string;
  slug: string;
  people: { email: string; name: string; role: Role }[];
  customers: { name: string; sites: { name: string; timeZone: string }[] }[];
  /** Customers whose every site the site manager of this e-mail looks after. */
  siteManagers: { email: string; customer: string }[];
};

export const DEMO_ORGANISATIONS: DemoOrganisation[] = [
  {
    name: "Corvid Thermal Machines",
    slug: "corvid",
    people: [
      { email: "owner@corvid.example", name: "Ines Marlowe", role: "owner" },
      { email: "admin@corvid.example", name: "Tomas Reyne", role: "admin" },
      { email: "engineer@corvid.example", name: "Priya Albright", role: "engineer" },
      { email: "engineer2@corvid.example", name: "Jonah Kestrel", role: "engineer" },
      { email: "viewer@corvid.example", name: "Elsa Varga", role: "viewer" },
      { email: "manager@halden.example", name: "Birgit Solheim", role: "site_manager" },
    ],
    customers: [
      {
        name: "Halden Plastics",
        sites: [
          { name: "Halden North Works", timeZone: "Europe/Oslo" },
          { name: "Halden Riverside", timeZone: "Europe/Oslo" },
        ],
      },
      { name: "Mirabel Tubing", sites: [{ name: "Mirabel Valence", timeZone: "Europe/Paris" }] },
      { name: "Oakhurst Film", sites: [{ name: "Oakhurst Leeds", timeZone: "Europe/London" }] },
    ],
    siteManagers: [{ email: "manager@halden.example", customer: "Halden Plastics" }],
  },
  {
    name: "Pellworth Pumps",
    slug: "pellworth",
    people: [
      { email: "owner@pellworth.example", name: "Marten Hollis", role: "owner" },
      // A second member, so the demo release's gain set has a second pair of eyes.
      { email: "engineer@pellworth.example", name: "Ilse Brandt", role: "engineer" },
    ],
    customers: [{ name: "Dunmore Water Board", sites: [{ name: "Dunmore Intake", timeZone: "Europe/Dublin" }] }],
    siteManagers: [],
  },
];

// ---- The demo fleets (invented). Gains are SIMC-style PI settings for the plants the fleet
// simulator runs (scripts/simulator/plants.ts); thresholds are practice defaults.
import type { LoopTemplateSpec } from "../../tests/factories";

export type DemoFleet = {
  model: { name: string; description: string; templates: LoopTemplateSpec[] };
  /** Machines per site name, serial prefix and firmware versions to spread. */
  machines: { site: string; count: number }[];
  serialPrefix: string;
  firmware: string[];
};

// Every template's oscillation limit follows Hägglund's rule (1995, memory): more than 10
// load detections within 50·Tu, i.e. 720/Tu per hour (app/lib/health/REFERENCES.md).
const zone = (n: number): LoopTemplateSpec => ({
  key: `zone_${n}`,
  name: `Barrel zone ${n}`,
  unit: "°C",
  outputUnit: "counts",
  samplePeriodS: 1,
  outputMin: 0,
  outputMax: 255,
  defaultGains: { kp: 6.25, ki: 0.039, kd: 0 },
  gainEnvelope: { kp: [0.5, 40], ki: [0, 0.5], kd: [0, 200] },
  referenceModel: { type: "fopdt", gain: 1.2, timeConstant: 300, deadTime: 20 },
  thresholds: { acceptableAmplitude: 1.5, ultimatePeriod: 160, oscillationPerHour: oscillationLimitPerHour(160), saturationWatch: 0.05, saturationAct: 0.2, clampWatch: 0.05, clampAct: 0.2, errRmsWatch: 1.5 },
});

export const DEMO_FLEETS: Record<string, DemoFleet> = {
  corvid: {
    model: {
      name: "Extrusion line",
      description: "Single-screw extrusion line: four barrel heater zones, screw drive and melt pressure.",
      templates: [
        zone(1),
        zone(2),
        zone(3),
        zone(4),
        {
          key: "screw_speed",
          name: "Screw speed",
          unit: "rpm",
          samplePeriodS: 0.1,
          outputMin: 0,
          outputMax: 100,
          defaultGains: { kp: 3.33, ki: 2.08, kd: 0 },
          gainEnvelope: { kp: [0.1, 20], ki: [0, 20], kd: [0, 2] },
          referenceModel: { type: "fopdt", gain: 1.5, timeConstant: 2, deadTime: 0.2 },
          thresholds: { acceptableAmplitude: 1, ultimatePeriod: 1.6, oscillationPerHour: oscillationLimitPerHour(1.6) },
        },
        {
          key: "melt_pressure",
          name: "Melt pressure",
          unit: "bar",
          samplePeriodS: 0.2,
          outputMin: 0,
          outputMax: 100,
          defaultGains: { kp: 1.25, ki: 0.3125, kd: 0 },
          gainEnvelope: { kp: [0.05, 10], ki: [0, 5], kd: [0, 5] },
          referenceModel: { type: "fopdt", gain: 4, timeConstant: 5, deadTime: 0.5 },
          thresholds: { acceptableAmplitude: 3, ultimatePeriod: 4, oscillationPerHour: oscillationLimitPerHour(4) },
        },
      ],
    },
    machines: [
      { site: "Halden North Works", count: 14 },
      { site: "Halden Riverside", count: 12 },
      { site: "Mirabel Valence", count: 12 },
      { site: "Oakhurst Leeds", count: 10 },
    ],
    serialPrefix: "CTM-EX-",
    firmware: ["4.2.1", "4.2.1", "4.2.0", "4.1.3"],
  },
  pellworth: {
    model: {
      name: "Pump skid",
      description: "Booster pump skid with a variable-speed drive: flow and discharge pressure.",
      templates: [
        {
          key: "flow",
          name: "Flow",
          unit: "m³/h",
          samplePeriodS: 0.2,
          outputMin: 0,
          outputMax: 100,
          defaultGains: { kp: 1.25, ki: 0.83, kd: 0 },
          referenceModel: { type: "fopdt", gain: 2, timeConstant: 1.5, deadTime: 0.3 },
          // a ≈ 1 % of a 0–150 m³/h range (app/lib/health/REFERENCES.md, Hägglund 1995: a is 1 % of range).
          thresholds: { acceptableAmplitude: 1.5, ultimatePeriod: 1.5, oscillationPerHour: oscillationLimitPerHour(1.5) },
        },
        {
          key: "pressure",
          name: "Discharge pressure",
          unit: "bar",
          samplePeriodS: 0.2,
          outputMin: 0,
          outputMax: 100,
          defaultGains: { kp: 30, ki: 10, kd: 0 },
          gainEnvelope: { kp: [1, 100], ki: [0, 50], kd: [0, 10] },
          referenceModel: { type: "fopdt", gain: 0.1, timeConstant: 3, deadTime: 0.5 },
          thresholds: { acceptableAmplitude: 0.1, ultimatePeriod: 3, oscillationPerHour: oscillationLimitPerHour(3) },
        },
      ],
    },
    machines: [{ site: "Dunmore Intake", count: 12 }],
    serialPrefix: "PP-SK-",
    firmware: ["2.7.0", "2.6.4"],
  },
};
