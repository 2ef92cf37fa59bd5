/** The practice's contact-lens catalogue: listing, adding and withdrawing lenses (owner only at the route). */
import { asc, desc, eq } from "drizzle-orm";
import { contactLenses } from "~/db/schema";
import type { CatalogueLens } from "~/lib/contact-lens/catalogue";
import { audit } from "~/utils/audit.server";
import { db, type Tx } from "~/utils/db.server";
import type { SessionUser } from "~/utils/session.server";

type Conn = Tx | typeof db;

const toLens = (r: typeof contactLenses.$inferSelect): CatalogueLens & { active: boolean } => ({
  id: r.id,
  manufacturer: r.manufacturer,
  name: r.name,
  material: r.material,
  replacement: r.replacement,
  baseCurvesMm: r.baseCurvesMm,
  diametersMm: r.diametersMm,
  sphereMin: r.sphereMin,
  sphereMax: r.sphereMax,
  sphereStep: r.sphereStep,
  cylinders: r.cylinders,
  axisStep: r.axisStep,
  active: r.active,
});

/** Every lens in the catalogue (offered first), or only those offered for new fittings. */
export async function catalogueLenses(opts: { activeOnly?: boolean } = {}, conn: Conn = db) {
  const rows = await conn
    .select()
    .from(contactLenses)
    .where(opts.activeOnly ? eq(contactLenses.active, true) : undefined)
    .orderBy(desc(contactLenses.active), asc(contactLenses.manufacturer), asc(contactLenses.name));
  return rows.map(toLens);
}

export type NewLens = Omit<CatalogueLens, "id">;

export async function addCatalogueLens(user: SessionUser, lens: NewLens, request: Request) {
  return db.transaction(async (tx) => {
    const [row] = await tx.insert(contactLenses).values(lens).returning({ id: contactLenses.id });
    await audit(
      {
        action: "contact_lens.added",
        actorUserId: user.id,
        entityType: "contact_lens",
        entityId: row!.id,
        detail: lens,
        request,
      },
      tx,
    );
    return row!.id;
  });
}

/** Withdraws a lens from new fittings or offers it again; prescriptions already issued keep it. */
export async function setCatalogueLensActive(user: SessionUser, id: string, active: boolean, request: Request) {
  return db.transaction(async (tx) => {
    const [row] = await tx
      .update(contactLenses)
      .set({ active })
      .where(eq(contactLenses.id, id))
      .returning({ name: contactLenses.name, manufacturer: contactLenses.manufacturer });
    if (row)
      await audit(
        {
          action: active ? "contact_lens.restore" : "contact_lens.withdraw",
          actorUserId: user.id,
          entityType: "contact_lens",
          entityId: id,
          request,
        },
        tx,
      );
    return row ?? null;
  });
}
