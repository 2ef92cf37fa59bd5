import { z } from "zod";
import { COATINGS, LENS_MATERIALS, ORDER_STATES } from "~/lib/orders/states";

const optionalMm = (label: string) =>
  z.preprocess(
    (v) => (v === "" || v === undefined || v === null ? undefined : v),
    z.coerce
      .number({ error: `${label}: give millimetres, e.g. 20.` })
      .min(5, `${label}: at least 5 mm.`)
      .max(45, `${label}: at most 45 mm.`)
      .optional(),
  );
const pd = (label: string) =>
  z.coerce
    .number({ error: `${label}: give the monocular PD in mm, e.g. 32.` })
    .min(20, `${label}: a monocular PD is between 20 and 45 mm.`)
    .max(45, `${label}: a monocular PD is between 20 and 45 mm.`)
    .multipleOf(0.5, `${label}: to the nearest 0.5 mm.`);

export const spectacleOrderSchema = z.object({
  kind: z.literal("spectacles"),
  prescriptionId: z.uuid({ error: "Choose a prescription." }),
  labId: z.uuid({ error: "Choose the lab." }),
  frameId: z.uuid({ error: "Choose a frame from stock." }),
  lensType: z.enum(["single_vision", "bifocal", "varifocal", "occupational"], { error: "Choose the lens type." }),
  lensMaterial: z.enum(LENS_MATERIALS, { error: "Choose the lens material." }),
  coatings: z.array(z.enum(COATINGS)).default([]),
  tint: z.string().trim().max(80, "At most 80 characters.").default(""),
  pdRightMm: pd("Right PD"),
  pdLeftMm: pd("Left PD"),
  heightRightMm: optionalMm("Right height"),
  heightLeftMm: optionalMm("Left height"),
  lensFeeItemId: z.uuid({ error: "Choose the lens price from the fee schedule." }),
  notes: z.string().trim().max(1000, "At most 1000 characters.").default(""),
});

const boxes = (label: string) =>
  z.coerce
    .number({ error: `${label}: give a number of boxes.` })
    .int("Whole boxes only.")
    .min(0, "Zero or more.")
    .max(24, "At most 24 boxes.");
export const contactLensOrderSchema = z.object({
  kind: z.literal("contact_lenses"),
  prescriptionId: z.uuid({ error: "Choose a prescription." }),
  labId: z.uuid({ error: "Choose the supplier." }),
  boxesRight: boxes("Right"),
  boxesLeft: boxes("Left"),
  lensFeeItemId: z.uuid({ error: "Choose the price per box from the fee schedule." }),
  notes: z.string().trim().max(1000, "At most 1000 characters.").default(""),
});

const prism = z.preprocess(
  (v) => (v === "" || v === undefined ? 0 : v),
  z.coerce
    .number({ error: "Give prism in Δ, e.g. 0.50." })
    .min(0, "Give the amount; choose the base beside it.")
    .max(10, "At most 10 Δ."),
);
const optionalPos = z.preprocess(
  (v) => (v === "" || v === undefined ? null : v),
  z.coerce.number({ error: "Give millimetres." }).min(5, "At least 5 mm.").max(50, "At most 50 mm.").nullable(),
);
const eyeReading = z
  .object({
    rx: z
      .string({ error: "Type the lensmeter reading, e.g. -2.25 -0.75 x 175." })
      .trim()
      .min(1, "Type the lensmeter reading, e.g. -2.25 -0.75 x 175.")
      .max(40),
    add: z.string().trim().max(10).default(""),
    horizontalPrism: prism,
    horizontalBase: z.enum(["", "in", "out"]).default(""),
    verticalPrism: prism,
    verticalBase: z.enum(["", "up", "down"]).default(""),
    pdMm: optionalPos,
    heightMm: optionalPos,
  })
  .refine((r) => !r.horizontalPrism || r.horizontalBase, {
    path: ["horizontalBase"],
    message: "Choose base in or out.",
  })
  .refine((r) => !r.verticalPrism || r.verticalBase, { path: ["verticalBase"], message: "Choose base up or down." });

export const checkSchema = z.object({
  intent: z.literal("check"),
  expected: z.literal("received"),
  right: eyeReading,
  left: eyeReading,
});

/** Releasing spectacles that failed the dispensing check needs a reason of at least this many characters. */
export const RELEASE_REASON_MIN = 5;
export const RELEASE_REASON_MESSAGE =
  "Give the reason for releasing spectacles that failed the check (for example: agreed with the patient after a trial of wear).";

/** A move of an order from the state it was seen in (`expected`) to the next. */
export const moveSchema = z.discriminatedUnion("intent", [
  z.object({ intent: z.literal("send"), expected: z.enum(["draft", "remake"]) }),
  z.object({ intent: z.literal("received"), expected: z.literal("sent_to_lab") }),
  z.object({ intent: z.literal("ready"), expected: z.enum(["checked", "received"]) }),
  z.object({
    intent: z.literal("release"),
    expected: z.literal("checked"),
    reason: z
      .string({ error: RELEASE_REASON_MESSAGE })
      .trim()
      .min(RELEASE_REASON_MIN, RELEASE_REASON_MESSAGE)
      .max(500, "At most 500 characters."),
  }),
  z.object({
    intent: z.literal("remake"),
    expected: z.enum(ORDER_STATES),
    reason: z
      .string({ error: "Say why the order is being remade." })
      .trim()
      .min(3, "Say why the order is being remade.")
      .max(500),
  }),
  z.object({
    intent: z.literal("cancel"),
    expected: z.enum(ORDER_STATES),
    reason: z
      .string({ error: "Say why the order is cancelled." })
      .trim()
      .min(3, "Say why the order is cancelled.")
      .max(500),
  }),
  z.object({
    intent: z.literal("collect"),
    expected: z.literal("ready_to_collect"),
    method: z.enum(["cash", "card_desk"]).default("card_desk"),
    amount: z.string().trim().default(""),
    reference: z.string().trim().max(80).default(""),
  }),
  z.object({ intent: z.literal("raise-invoice") }),
]);
