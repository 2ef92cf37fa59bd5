/**
 * Demo cases for referral triage: one or more patients for each rule the triage engine applies
 * (app/lib/referrals/triage.ts), each with the findings that call for it. Every person is
 * invented; the findings are made up to illustrate the rule, not taken from any record.
 */

type EyeOrBoth = "right" | "left" | "both";
export type TriageFindings = {
  redFlags?: Partial<
    Record<"flashes" | "newFloaters" | "curtain" | "suddenLoss" | "severePain" | "redEye" | "distortion", EyeOrBoth>
  > & { newDiplopia?: boolean; gcaSymptoms?: boolean; headache?: boolean; notes?: string };
  pupils?: Partial<Record<"right" | "left", { equalReactive?: boolean; rapd?: boolean; larger?: boolean }>>;
  ac?: Partial<
    Record<
      "right" | "left",
      {
        vanHerick?: number;
        cells?: "none" | "trace" | "1+" | "2+" | "3+" | "4+";
        hyphaema?: boolean;
        hypopyon?: boolean;
        notes?: string;
      }
    >
  >;
  disc?: Partial<
    Record<
      "right" | "left",
      {
        verticalCd?: number;
        margins?: "distinct" | "blurred";
        swelling?: boolean;
        haemorrhage?: boolean;
        notes?: string;
      }
    >
  >;
  fundus?: Partial<
    Record<
      "right" | "left",
      {
        vitreousDetachment?: boolean;
        vitreousPigment?: boolean;
        retinalBreak?: boolean;
        retinalDetachment?: boolean;
        drusen?: boolean;
        suspectedWetAmd?: boolean;
        maculaNotes?: string;
        peripheryNotes?: string;
      }
    >
  >;
  /** Readings per eye and their method; replaces the single non-contact reading. */
  iop?: Partial<
    Record<
      "right" | "left",
      { readings: number[]; method: "goldmann" | "non_contact" | "rebound" | "handheld_applanation" }
    >
  >;
  cct?: Partial<Record<"right" | "left", number>>;
  dilated?: boolean;
  /** Best-corrected distance acuity, logMAR, per eye. */
  bestVa?: Partial<Record<"right" | "left", number>>;
  /** Diagnoses with their eye (codes from app/lib/exam/sections.ts). */
  diagnoses?: { code: string; eye: EyeOrBoth }[];
  assessment?: string;
  plan?: string;
};

export type TriageCase = {
  first: string;
  last: string;
  dob: string;
  sex: "female" | "male";
  /** The triage rule this case shows (in the engine's words, shortened). */
  rule: string;
  reason: string;
  symptoms: string;
  /** Days before the caseload's anchor date. */
  daysAgo: number;
  findings: TriageFindings;
  /** The right eye's plotted blind spot (degrees), when the case shows a field finding. */
  blindSpot?: { w: number; h: number };
  /** Best-corrected acuity at an exam a year earlier, for the acuity-loss rule. */
  previousBestVa?: Partial<Record<"right" | "left", number>>;
  medications?: string;
  allergies?: string;
};

const normalPupils = { right: { equalReactive: true }, left: { equalReactive: true } };
const quietAc = { right: { vanHerick: 3, cells: "none" as const }, left: { vanHerick: 3, cells: "none" as const } };

export const TRIAGE_CASES: TriageCase[] = [
  {
    first: "Marguerite",
    last: "Ellingham-Asante",
    dob: "1961-05-14",
    sex: "female",
    rule: "Retinal break with flashes or floaters; pigment in the anterior vitreous",
    reason: "Flashes and new floaters, left eye, since yesterday",
    symptoms: "Flashes at the left edge of vision in dim light; a shower of new dots",
    daysAgo: 2,
    findings: {
      redFlags: { flashes: "left", newFloaters: "left", notes: "Started yesterday evening; no shadow" },
      pupils: normalPupils,
      ac: quietAc,
      dilated: true,
      fundus: {
        left: {
          vitreousDetachment: true,
          vitreousPigment: true,
          retinalBreak: true,
          peripheryNotes: "Horseshoe tear superotemporal, about 1 o'clock",
        },
        right: {},
      },
      disc: { right: { verticalCd: 0.3, margins: "distinct" }, left: { verticalCd: 0.3, margins: "distinct" } },
      diagnoses: [
        { code: "H33.3", eye: "left" },
        { code: "H43.8", eye: "left" },
      ],
      assessment: "Symptomatic horseshoe tear left with tobacco dust.",
      plan: "Same-day referral to the eye unit by telephone and letter.",
    },
  },
  {
    first: "Osric",
    last: "Thornbury-Nwosu",
    dob: "1970-09-03",
    sex: "male",
    rule: "Retinal detachment",
    reason: "Shadow over the right eye's vision",
    symptoms: "A grey shadow rising from below in the right eye over two days",
    daysAgo: 3,
    findings: {
      redFlags: { curtain: "right", flashes: "right" },
      pupils: normalPupils,
      dilated: true,
      fundus: {
        right: { retinalDetachment: true, retinalBreak: true, peripheryNotes: "Inferior detachment, macula on" },
      },
      diagnoses: [{ code: "H33.0", eye: "right" }],
    },
  },
  {
    first: "Leontine",
    last: "Varga-Holloway",
    dob: "1955-02-27",
    sex: "female",
    rule: "Shadow or curtain across the vision",
    reason: "Curtain over the left eye's vision this morning",
    symptoms: "A curtain over the upper half of the left eye's vision; small pupil, view of the periphery limited",
    daysAgo: 4,
    findings: {
      redFlags: { curtain: "left" },
      pupils: normalPupils,
      fundus: { left: { peripheryNotes: "View limited by cataract; no detachment seen centrally" } },
    },
  },
  {
    first: "Cassius",
    last: "Brightwater",
    dob: "1984-11-19",
    sex: "male",
    rule: "Retinal break without symptoms",
    reason: "Routine exam",
    symptoms: "None",
    daysAgo: 6,
    findings: {
      pupils: normalPupils,
      dilated: true,
      fundus: {
        right: { retinalBreak: true, peripheryNotes: "Small atrophic round hole inferotemporal, no subretinal fluid" },
      },
      diagnoses: [{ code: "H33.3", eye: "right" }],
    },
  },
  {
    first: "Philippa",
    last: "Dunstan-Oyelaran",
    dob: "1979-07-08",
    sex: "female",
    rule: "New flashes or floaters without a retinal break found",
    reason: "New floater, right eye",
    symptoms: "A cobweb floater in the right eye for three days; no flashes",
    daysAgo: 5,
    findings: {
      redFlags: { newFloaters: "right" },
      pupils: normalPupils,
      fundus: { right: { vitreousDetachment: true, peripheryNotes: "Undilated view; periphery not seen" } },
    },
  },
  {
    first: "Ambrose",
    last: "Kettlewell",
    dob: "1948-04-30",
    sex: "male",
    rule: "Sudden loss of vision",
    reason: "Left eye went dim this morning",
    symptoms: "Painless sudden loss of vision in the left eye on waking",
    daysAgo: 1,
    findings: {
      redFlags: { suddenLoss: "left" },
      pupils: { right: {}, left: { rapd: true } },
      bestVa: { right: 0.1, left: 1.3 },
    },
  },
  {
    first: "Henrietta",
    last: "Saltash-Mensah",
    dob: "1946-01-22",
    sex: "female",
    rule: "Symptoms of giant cell arteritis",
    reason: "Headache and blurred vision",
    symptoms: "New right-sided headache for a week, tender scalp when brushing hair, jaw aches when chewing",
    daysAgo: 2,
    findings: {
      redFlags: { gcaSymptoms: true, notes: "Scalp tenderness and jaw pain on chewing; feels unwell" },
      pupils: normalPupils,
      disc: { right: { verticalCd: 0.3, margins: "distinct" }, left: { verticalCd: 0.3, margins: "distinct" } },
    },
  },
  {
    first: "Tobias",
    last: "Renwick-Achterfeld",
    dob: "1990-12-11",
    sex: "male",
    rule: "Cells in the anterior chamber; sudden severe eye pain",
    reason: "Painful red right eye, light hurts",
    symptoms: "Aching right eye for two days, photophobia, blurred",
    daysAgo: 1,
    findings: {
      redFlags: { severePain: "right", redEye: "right" },
      ac: {
        right: { vanHerick: 3, cells: "2+", notes: "Flare 1+, ciliary injection" },
        left: { vanHerick: 3, cells: "none" },
      },
      pupils: { right: { equalReactive: false }, left: { equalReactive: true } },
    },
  },
  {
    first: "Solveig",
    last: "Marchbank",
    dob: "2001-03-05",
    sex: "female",
    rule: "Blood in the anterior chamber (hyphaema)",
    reason: "Hit in the right eye by a squash ball",
    symptoms: "Blurred right eye since a squash ball struck it an hour ago",
    daysAgo: 8,
    findings: {
      redFlags: { redEye: "right" },
      ac: { right: { vanHerick: 3, cells: "1+", hyphaema: true, notes: "1 mm layered hyphaema" } },
    },
  },
  {
    first: "Evander",
    last: "Quist-Loughlin",
    dob: "1975-10-25",
    sex: "male",
    rule: "Pus in the anterior chamber (hypopyon)",
    reason: "Contact-lens wearer with a painful red left eye",
    symptoms: "Slept in monthly lenses; left eye painful and sticky",
    daysAgo: 2,
    findings: {
      redFlags: { severePain: "left", redEye: "left" },
      ac: {
        left: { vanHerick: 3, cells: "3+", hypopyon: true, notes: "Central corneal infiltrate with overlying defect" },
      },
    },
  },
  {
    first: "Delphine",
    last: "Arkwright-Obi",
    dob: "1952-06-16",
    sex: "female",
    rule: "Painful red eye with raised pressure (possible acute angle closure); IOP 40 mmHg or more",
    reason: "Severe ache round the left eye with haloes",
    symptoms: "Haloes round lights and an ache round the left eye since last night, nausea",
    daysAgo: 1,
    findings: {
      redFlags: { severePain: "left", redEye: "left" },
      ac: {
        right: { vanHerick: 1 },
        left: { vanHerick: 0, cells: "trace", notes: "Corneal oedema; mid-dilated pupil" },
      },
      iop: { right: { readings: [18], method: "goldmann" }, left: { readings: [54, 56], method: "goldmann" } },
    },
  },
  {
    first: "Magnus",
    last: "Threlkeld",
    dob: "1956-08-09",
    sex: "male",
    rule: "IOP 40 mmHg or more",
    reason: "Routine exam",
    symptoms: "None",
    daysAgo: 9,
    findings: {
      pupils: normalPupils,
      ac: quietAc,
      iop: { right: { readings: [17], method: "non_contact" }, left: { readings: [44, 42], method: "non_contact" } },
      disc: { right: { verticalCd: 0.4, margins: "distinct" }, left: { verticalCd: 0.6, margins: "distinct" } },
    },
  },
  {
    first: "Rupert",
    last: "Haverstock",
    dob: "1963-03-21",
    sex: "male",
    rule: "IOP above 35 mmHg",
    reason: "Routine exam",
    symptoms: "None",
    daysAgo: 10,
    findings: {
      pupils: normalPupils,
      ac: quietAc,
      iop: { right: { readings: [37, 38], method: "goldmann" }, left: { readings: [21, 22], method: "goldmann" } },
      cct: { right: 545, left: 550 },
      disc: { right: { verticalCd: 0.55, margins: "distinct" }, left: { verticalCd: 0.45, margins: "distinct" } },
      diagnoses: [{ code: "H40.0", eye: "right" }],
    },
  },
  {
    first: "Gwendolyn",
    last: "Pryce-Adeyemi",
    dob: "1966-05-02",
    sex: "female",
    rule: "IOP 24 mmHg or more by applanation; vertical cup/disc 0.7 or more; cup/disc asymmetry",
    reason: "Routine exam; mother has glaucoma",
    symptoms: "None",
    daysAgo: 12,
    findings: {
      pupils: normalPupils,
      ac: quietAc,
      iop: { right: { readings: [26, 25], method: "goldmann" }, left: { readings: [19, 20], method: "goldmann" } },
      cct: { right: 520, left: 525 },
      disc: {
        right: { verticalCd: 0.7, margins: "distinct", notes: "Inferior rim thinning" },
        left: { verticalCd: 0.4, margins: "distinct" },
      },
      diagnoses: [{ code: "H40.0", eye: "right" }],
    },
  },
  {
    first: "Fitzgerald",
    last: "Oyelowo-Brandt",
    dob: "1988-07-29",
    sex: "male",
    rule: "Swollen optic disc (possible papilloedema)",
    reason: "Headaches worse lying down",
    symptoms: "Headaches on waking for a month, brief greying of vision on standing",
    daysAgo: 3,
    findings: {
      pupils: normalPupils,
      disc: {
        right: { verticalCd: 0.1, margins: "blurred", swelling: true },
        left: { verticalCd: 0.1, margins: "blurred", swelling: true },
      },
      diagnoses: [{ code: "H47.1", eye: "both" }],
    },
  },
  {
    first: "Marisol",
    last: "Quennell-Adebayo",
    dob: "1997-10-04",
    sex: "female",
    rule: "Enlarged blind spot with headache: possible papilloedema",
    reason: "Headaches for three weeks, worse in the mornings",
    symptoms: "Headaches on waking and when bending, whooshing in the ears",
    daysAgo: 2,
    blindSpot: { w: 10.5, h: 12.5 },
    findings: {
      redFlags: { headache: true, notes: "Headache worse on waking and on bending; no vomiting" },
      pupils: normalPupils,
      disc: {
        right: { verticalCd: 0.2, margins: "distinct", notes: "Small crowded discs; view limited without dilation" },
        left: { verticalCd: 0.2, margins: "distinct" },
      },
    },
  },
  {
    first: "Isadora",
    last: "Penhaligon",
    dob: "1994-02-13",
    sex: "female",
    rule: "Relative afferent pupillary defect",
    reason: "Right eye colours look washed out",
    symptoms: "Right eye dimmer for four days, aches when looking around",
    daysAgo: 4,
    findings: {
      pupils: { right: { rapd: true }, left: { equalReactive: false } },
      disc: { right: { verticalCd: 0.2, margins: "distinct" }, left: { verticalCd: 0.2, margins: "distinct" } },
      bestVa: { right: 0.5, left: 0 },
    },
  },
  {
    first: "Barnaby",
    last: "Cresswell-Iqbal",
    dob: "1957-09-17",
    sex: "male",
    rule: "Haemorrhage at the optic disc margin",
    reason: "Routine exam",
    symptoms: "None",
    daysAgo: 14,
    findings: {
      pupils: normalPupils,
      iop: { right: { readings: [18], method: "goldmann" }, left: { readings: [19], method: "goldmann" } },
      disc: {
        right: { verticalCd: 0.5, margins: "distinct" },
        left: {
          verticalCd: 0.55,
          margins: "distinct",
          haemorrhage: true,
          notes: "Splinter haemorrhage inferotemporal rim",
        },
      },
    },
  },
  {
    first: "Winifred",
    last: "Ashdown-Kaur",
    dob: "1944-12-01",
    sex: "female",
    rule: "Suspected wet age-related macular degeneration",
    reason: "Door frames look bent in the right eye",
    symptoms: "Wavy lines in the right eye for a week",
    daysAgo: 3,
    findings: {
      redFlags: { distortion: "right" },
      dilated: true,
      fundus: {
        right: {
          drusen: true,
          suspectedWetAmd: true,
          maculaNotes: "Subretinal haemorrhage at the fovea with soft drusen",
        },
        left: { drusen: true },
      },
      bestVa: { right: 0.5, left: 0.1 },
      diagnoses: [{ code: "H35.3", eye: "both" }],
    },
  },
  {
    first: "Lysander",
    last: "Moorcroft",
    dob: "1950-10-10",
    sex: "male",
    rule: "New distortion of straight lines",
    reason: "Reading line breaks up in the left eye",
    symptoms: "Letters in one spot of the left eye look bent since last week",
    daysAgo: 5,
    findings: {
      redFlags: { distortion: "left" },
      fundus: { left: { drusen: true, maculaNotes: "Drusen; no haemorrhage seen undilated" } },
    },
  },
  {
    first: "Clementine",
    last: "Fairweather-Oduya",
    dob: "1949-04-04",
    sex: "female",
    rule: "Best-corrected acuity two lines or more worse than at the previous visit",
    reason: "Right eye more blurred than last year",
    symptoms: "Gradual blur in the right eye over months; glare at night",
    daysAgo: 15,
    previousBestVa: { right: 0, left: 0 },
    findings: {
      pupils: normalPupils,
      bestVa: { right: 0.3, left: 0 },
      fundus: { right: { maculaNotes: "Flat; view hazy through lens opacity" } },
      diagnoses: [{ code: "H25.9", eye: "right" }],
    },
  },
  {
    first: "Hamish",
    last: "Undercliffe",
    dob: "1968-01-18",
    sex: "male",
    rule: "New double vision",
    reason: "Seeing double when driving",
    symptoms: "Horizontal double vision at distance for a week, no pain",
    daysAgo: 6,
    findings: { redFlags: { newDiplopia: true }, pupils: normalPupils, diagnoses: [{ code: "H53.2", eye: "both" }] },
  },
  {
    first: "Rosamund",
    last: "Ibbotson",
    dob: "1958-11-27",
    sex: "female",
    rule: "New double vision with eye pain",
    reason: "Double vision and a drooping right lid",
    symptoms: "Double vision and ache behind the right eye since yesterday; right lid droops",
    daysAgo: 1,
    findings: { redFlags: { newDiplopia: true, severePain: "right" }, pupils: { right: { larger: true }, left: {} } },
  },
];

/** A fictional GP practice per patient, chosen by position. */
export const DEMO_GPS = [
  {
    gpName: "Dr Ottilie Bramhall",
    gpPractice: "Brackenford Health Centre",
    gpAddress: "2 Weir Street, Brackenford BF1 2AA",
    gpPhone: "01632 960 100",
  },
  {
    gpName: "Dr Kwame Hetherington",
    gpPractice: "Upper Holloway Surgery",
    gpAddress: "61 Quarry Hill, Brackenford BF2 5HS",
    gpPhone: "01632 960 155",
  },
  {
    gpName: "Dr Saoirse Lindqvist",
    gpPractice: "Millbrook Medical Practice",
    gpAddress: "Millbrook Lane, Hollins Vale HV4 2MP",
    gpPhone: "01632 960 190",
  },
];

export const VA_TEXT: Record<string, string> = {
  "0": "6/6",
  "0.1": "6/7.5",
  "0.3": "6/12",
  "0.5": "6/19",
  "1.3": "3/60",
};
