/**
 * Demo referral recipients: ophthalmologists and clinics of our own invention. Every name,
 * address and number is fictional; e-mail addresses use the reserved .test domain.
 */
import { sql } from "drizzle-orm";
import type { NodePgDatabase } from "drizzle-orm/node-postgres";
import * as schema from "../app/db/schema";

type Tx = Parameters<Parameters<NodePgDatabase<typeof schema>["transaction"]>[0]>[0];
const { referralRecipients } = schema;

export const DEMO_RECIPIENTS = [
  {
    name: "Mr Lucan Ferreira-Holt",
    clinic: "Brackenford Eye Unit",
    specialty: "Glaucoma",
    email: "l.ferreira-holt@brackenford-eye.test",
    phone: "01632 960 771",
    addressLine1: "Eye Unit, Level 2, Brackenford General",
    addressLine2: "Saltmarsh Road",
    city: "Brackenford",
    postcode: "BF1 3RE",
    preferredDelivery: "email" as const,
    notes: "Glaucoma clinics Tuesday and Thursday.",
  },
  {
    name: "Dr Annelise Quarrie",
    clinic: "Hollins Vale Hospital",
    specialty: "Neuro-ophthalmology",
    email: "a.quarrie@hollinsvale.test",
    phone: "01632 960 245",
    addressLine1: "Department of Ophthalmology",
    addressLine2: "Hollins Vale Hospital, Mill Lane",
    city: "Hollins Vale",
    postcode: "HV4 8TT",
    preferredDelivery: "email" as const,
    notes: "",
  },
  {
    name: "Referral desk",
    clinic: "Brackenford Eye Unit",
    specialty: "General ophthalmology and urgent eye care",
    email: "referrals@brackenford-eye.test",
    phone: "01632 960 700",
    addressLine1: "Eye Unit, Level 2, Brackenford General",
    addressLine2: "Saltmarsh Road",
    city: "Brackenford",
    postcode: "BF1 3RE",
    preferredDelivery: "email" as const,
    notes: "Same-day referrals: phone the desk as well.",
  },
  {
    name: "Dr Wendell Okonjo-Price",
    clinic: "Marlow Street Retina Clinic",
    specialty: "Medical retina",
    email: null,
    phone: "01632 960 389",
    addressLine1: "22 Marlow Street",
    addressLine2: "",
    city: "Brackenford",
    postcode: "BF3 9LN",
    preferredDelivery: "post" as const,
    notes: "Prefers letters by post.",
  },
];

/** Adds the demo recipients that are not there yet (matched by name and clinic). */
export async function seedReferrals(tx: Tx) {
  for (const r of DEMO_RECIPIENTS) {
    const [existing] = await tx
      .select({ id: referralRecipients.id })
      .from(referralRecipients)
      .where(
        sql`lower(${referralRecipients.name}) = ${r.name.toLowerCase()} and lower(${referralRecipients.clinic}) = ${r.clinic.toLowerCase()}`,
      )
      .limit(1);
    if (!existing) await tx.insert(referralRecipients).values(r);
  }
}
