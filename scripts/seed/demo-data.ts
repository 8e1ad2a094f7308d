// The invented demo scenario of DESIGN.md section 9. Names, sites and people are made up.
import type { Role } from "~/lib/access/capabilities";

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
    people: [{ email: "owner@pellworth.example", name: "Marten Hollis", role: "owner" }],
    customers: [{ name: "Dunmore Water Board", sites: [{ name: "Dunmore Intake", timeZone: "Europe/Dublin" }] }],
    siteManagers: [],
  },
];
