import { parseWithZod } from "@conform-to/zod/v4";
import { asc, desc, eq } from "drizzle-orm";
import { data, Form, useNavigation } from "react-router";
import { z } from "zod";
import type { Route } from "./+types/frames";
import { ErrorList } from "~/components/forms";
import { PageHeader } from "~/components/page-header";
import { Button } from "~/components/ui/button";
import { Card } from "~/components/ui/card";
import { Input } from "~/components/ui/input";
import { Notice, StatusBadge } from "~/components/ui/notice";
import { frames, practiceSettings } from "~/db/schema";
import { formatMoney, parseMoney } from "~/lib/money";
import { audit } from "~/utils/audit.server";
import { requireRole } from "~/utils/auth.server";
import { db } from "~/utils/db.server";
import { redirectWithToast } from "~/utils/toast.server";
import { decimalField } from "~/utils/number-field";

const text = (label: string, max = 80) =>
  z
    .string({ error: `Give the ${label}.` })
    .trim()
    .min(1, `Give the ${label}.`)
    .max(max, `At most ${max} characters.`);
const quantity = decimalField(
  "Give a number.",
  z.number().int("Whole frames only.").min(0, "Zero or more.").max(999, "At most 999."),
);

export const frameSchema = z.object({
  intent: z.literal("add"),
  supplier: text("supplier"),
  model: text("model"),
  colour: text("colour"),
  size: z
    .string({ error: "Give the boxed size, e.g. 52-18-140." })
    .trim()
    .regex(/^\d{2}[-□ ]\d{1,2}[- ]\d{3}$/, "Give the boxed size as eye-bridge-side, e.g. 52-18-140."),
  price: z.string({ error: "Give the selling price." }).trim().min(1, "Give the selling price."),
  quantity,
});
const stockSchema = z.object({ intent: z.literal("stock"), id: z.uuid(), quantity });
const activeSchema = z.object({ intent: z.enum(["withdraw", "restore"]), id: z.uuid() });

export async function loader({ request }: Route.LoaderArgs) {
  await requireRole(request, ["owner"]);
  const rows = await db.select().from(frames).orderBy(desc(frames.active), asc(frames.supplier), asc(frames.model));
  const [p] = await db
    .select({ currency: practiceSettings.currency })
    .from(practiceSettings)
    .where(eq(practiceSettings.id, 1));
  return { frames: rows.map((f) => ({ ...f, createdAt: undefined })), currency: p?.currency ?? "GBP" };
}

export async function action({ request }: Route.ActionArgs) {
  const user = await requireRole(request, ["owner"]);
  const formData = await request.formData();
  const intent = String(formData.get("intent"));
  const schema = intent === "add" ? frameSchema : intent === "stock" ? stockSchema : activeSchema;
  const submission = parseWithZod(formData, { schema });
  if (submission.status !== "success")
    return data({ intent, id: formData.get("id"), result: submission.reply() }, { status: 400 });
  const v = submission.value;
  if (v.intent === "add") {
    const [p] = await db
      .select({ currency: practiceSettings.currency })
      .from(practiceSettings)
      .where(eq(practiceSettings.id, 1));
    const priceMinor = parseMoney(v.price, p?.currency ?? "GBP");
    if (priceMinor === null || priceMinor < 0)
      return data(
        { intent, id: null, result: submission.reply({ fieldErrors: { price: ["Give a price such as 89.00."] } }) },
        { status: 400 },
      );
    await db.transaction(async (tx) => {
      const [f] = await tx
        .insert(frames)
        .values({
          supplier: v.supplier,
          model: v.model,
          colour: v.colour,
          size: v.size.replace(/[□ ]/g, "-"),
          priceMinor,
          quantity: v.quantity,
        })
        .returning({ id: frames.id });
      await audit(
        {
          action: "frame.added",
          actorUserId: user.id,
          entityType: "frame",
          entityId: f!.id,
          detail: { ...v, priceMinor },
          request,
        },
        tx,
      );
    });
    return redirectWithToast("/settings/frames", { kind: "success", title: `${v.supplier} ${v.model} added to stock` });
  }
  const changed = await db.transaction(async (tx) => {
    const set = v.intent === "stock" ? { quantity: v.quantity } : { active: v.intent === "restore" };
    const rows = await tx.update(frames).set(set).where(eq(frames.id, v.id)).returning({ model: frames.model });
    if (rows.length)
      await audit(
        {
          action: `frame.${v.intent}`,
          actorUserId: user.id,
          entityType: "frame",
          entityId: v.id,
          detail: set,
          request,
        },
        tx,
      );
    return rows[0];
  });
  if (!changed) throw data({ error: "Not found." }, { status: 404 });
  return redirectWithToast("/settings/frames", {
    kind: "success",
    title:
      v.intent === "stock"
        ? `Stock of ${changed.model} set to ${v.quantity}`
        : v.intent === "withdraw"
          ? `${changed.model} withdrawn from new orders`
          : `${changed.model} offered again`,
  });
}

export default function FramesSettings({ loaderData, actionData }: Route.ComponentProps) {
  const navigation = useNavigation();
  const addErrors = actionData?.intent === "add" ? (actionData.result.error ?? {}) : {};
  const fieldError = (name: string) => (addErrors as Record<string, string[] | null>)[name] ?? undefined;
  return (
    <>
      <PageHeader
        title="Frames"
        description="The practice's frame stock. An order takes one frame out of stock; cancelling it puts the frame back."
      />
      <Card title="Add a frame">
        <Form method="post" className="grid gap-4 sm:grid-cols-3" noValidate>
          <input type="hidden" name="intent" value="add" />
          {[
            ["supplier", "Supplier", "text"],
            ["model", "Model", "text"],
            ["colour", "Colour", "text"],
            ["size", "Size (eye-bridge-side)", "text"],
            ["price", `Price (${loaderData.currency})`, "text"],
            ["quantity", "Quantity in stock", "number"],
          ].map(([name, label, type]) => (
            <div key={name}>
              <label htmlFor={`frame-${name}`} className="mb-1 block text-sm font-semibold">
                {label}
              </label>
              <Input
                id={`frame-${name}`}
                name={name}
                type={type}
                inputMode={name === "price" ? "decimal" : undefined}
                aria-invalid={fieldError(name!) ? true : undefined}
                aria-describedby={fieldError(name!) ? `frame-${name}-error` : undefined}
              />
              <ErrorList id={`frame-${name}-error`} errors={fieldError(name!)} />
            </div>
          ))}
          <div className="sm:col-span-3">
            <Button
              type="submit"
              pending={navigation.state === "submitting" && navigation.formData?.get("intent") === "add"}
            >
              Add frame
            </Button>
          </div>
        </Form>
      </Card>
      <Card title="Stock" className="mt-6">
        {loaderData.frames.length === 0 ? (
          <p className="text-muted">No frames yet.</p>
        ) : (
          <div className="overflow-x-auto">
            <table className="w-full text-left text-sm">
              <thead>
                <tr className="border-b border-line">
                  <th className="py-2 pr-3">Frame</th>
                  <th className="py-2 pr-3">Size</th>
                  <th className="py-2 pr-3 text-right">Price</th>
                  <th className="py-2 pr-3">In stock</th>
                  <th className="py-2">Offered</th>
                </tr>
              </thead>
              <tbody>
                {loaderData.frames.map((f) => {
                  const err =
                    actionData?.intent === "stock" && actionData.id === f.id
                      ? (actionData.result.error as Record<string, string[]> | undefined)?.quantity
                      : undefined;
                  return (
                    <tr key={f.id} className="border-b border-line align-top">
                      <td className="py-2 pr-3">
                        <span className="font-semibold">
                          {f.supplier} {f.model}
                        </span>
                        <br />
                        {f.colour}
                      </td>
                      <td className="py-2 pr-3">{f.size}</td>
                      <td className="py-2 pr-3 text-right">{formatMoney(f.priceMinor, loaderData.currency)}</td>
                      <td className="py-2 pr-3">
                        <Form method="post" className="flex items-start gap-2">
                          <input type="hidden" name="intent" value="stock" />
                          <input type="hidden" name="id" value={f.id} />
                          <div>
                            <Input
                              aria-label={`Quantity of ${f.supplier} ${f.model} ${f.colour}`}
                              name="quantity"
                              type="number"
                              defaultValue={f.quantity}
                              className="w-20"
                            />
                            <ErrorList errors={err} />
                          </div>
                          <Button type="submit" variant="secondary">
                            Set
                          </Button>
                        </Form>
                        {f.quantity === 0 ? <StatusBadge tone="warning">Out of stock</StatusBadge> : null}
                      </td>
                      <td className="py-2">
                        <Form method="post">
                          <input type="hidden" name="intent" value={f.active ? "withdraw" : "restore"} />
                          <input type="hidden" name="id" value={f.id} />
                          <Button
                            type="submit"
                            variant="ghost"
                            aria-label={`${f.active ? "Withdraw" : "Offer again"}: ${f.supplier} ${f.model} ${f.colour}`}
                          >
                            {f.active ? "Withdraw" : "Offer again"}
                          </Button>
                        </Form>
                      </td>
                    </tr>
                  );
                })}
              </tbody>
            </table>
          </div>
        )}
      </Card>
      {actionData && actionData.intent !== "add" && actionData.intent !== "stock" ? (
        <Notice tone="error" title="Not saved" />
      ) : null}
    </>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Frames · Dioptra" }];
