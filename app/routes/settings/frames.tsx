import { parseWithZod } from "@conform-to/zod/v4";
import { createColumnHelper } from "@tanstack/react-table";
import { data, Form } from "react-router";
import { z } from "zod";
import type { Route } from "./+types/frames";
import { ErrorList } from "~/components/forms";
import { DataTable } from "~/components/data-table";
import { ActiveToggle, AddItemForm, SettingsPage } from "~/components/settings-page";
import { Button } from "~/components/ui/button";
import { Input } from "~/components/ui/input";
import { StatusBadge } from "~/components/ui/notice";
import { formatMoney } from "~/lib/format";
import { parseMoney } from "~/lib/money";
import { requireRole } from "~/utils/auth.server";
import { addFrame, changeFrame, framesPage } from "~/models/settings/frames.server";
import { practiceCurrency } from "~/models/settings/audited.server";
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
  return framesPage();
}

export async function action({ request }: Route.ActionArgs) {
  const user = await requireRole(request, ["owner"]);
  const actor = { userId: user.id, request };
  const formData = await request.formData();
  const intent = String(formData.get("intent"));
  const schema = intent === "add" ? frameSchema : intent === "stock" ? stockSchema : activeSchema;
  const submission = parseWithZod(formData, { schema });
  if (submission.status !== "success")
    return data({ intent, id: formData.get("id"), result: submission.reply() }, { status: 400 });
  const v = submission.value;
  if (v.intent === "add") {
    const priceMinor = parseMoney(v.price, await practiceCurrency());
    if (priceMinor === null || priceMinor < 0)
      return data(
        { intent, id: null, result: submission.reply({ fieldErrors: { price: ["Give a price such as 89.00."] } }) },
        { status: 400 },
      );
    await addFrame(
      {
        supplier: v.supplier,
        model: v.model,
        colour: v.colour,
        size: v.size.replace(/[□ ]/g, "-"),
        priceMinor,
        quantity: v.quantity,
      },
      actor,
    );
    return redirectWithToast("/settings/frames", { kind: "success", title: `${v.supplier} ${v.model} added to stock` });
  }
  const changed = await changeFrame(v.id, v, actor);
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

type Frame = Awaited<ReturnType<typeof loader>>["frames"][number];
const col = createColumnHelper<Frame>();

export default function FramesSettings({ loaderData, actionData }: Route.ComponentProps) {
  const addErrors = (actionData?.intent === "add" ? (actionData.result.error ?? {}) : {}) as Record<
    string,
    string[] | null
  >;
  const stockError = (id: string) =>
    actionData?.intent === "stock" && actionData.id === id
      ? (actionData.result.error as Record<string, string[]> | undefined)?.quantity
      : undefined;
  const columns = [
    col.accessor("model", {
      header: "Frame",
      cell: ({ row: { original: f } }) => (
        <>
          <span className="font-semibold">
            {f.supplier} {f.model}
          </span>
          <br />
          {f.colour}
        </>
      ),
    }),
    col.accessor("size", { header: "Size" }),
    col.accessor("priceMinor", {
      header: "Price",
      meta: { align: "right" },
      cell: (c) => formatMoney(c.getValue(), loaderData.currency),
    }),
    col.accessor("quantity", {
      header: "In stock",
      cell: ({ row: { original: f } }) => (
        <>
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
              <ErrorList errors={stockError(f.id)} />
            </div>
            <Button type="submit" variant="secondary">
              Set
            </Button>
          </Form>
          {f.quantity === 0 ? <StatusBadge tone="warning">Out of stock</StatusBadge> : null}
        </>
      ),
    }),
    col.accessor("active", {
      header: "Offered",
      cell: ({ row: { original: f } }) => (
        <ActiveToggle
          id={f.id}
          active={f.active}
          what={`${f.supplier} ${f.model} ${f.colour}`}
          withdrawLabel="Withdraw"
          restoreLabel="Offer again"
        />
      ),
    }),
  ];
  return (
    <SettingsPage
      title="Frames"
      description="The practice's frame stock. An order takes one frame out of stock; cancelling it puts the frame back."
      notice={
        actionData && actionData.intent !== "add" && actionData.intent !== "stock"
          ? { tone: "error", title: "Not saved" }
          : null
      }
      form={{
        title: "Add a frame",
        content: (
          <AddItemForm
            idPrefix="frame"
            columns={3}
            errors={(name) => addErrors[name] ?? undefined}
            submitLabel="Add frame"
            fields={[
              { name: "supplier", label: "Supplier" },
              { name: "model", label: "Model" },
              { name: "colour", label: "Colour" },
              { name: "size", label: "Size (eye-bridge-side)" },
              { name: "price", label: `Price (${loaderData.currency})`, inputMode: "decimal" },
              { name: "quantity", label: "Quantity in stock", type: "number" },
            ]}
          />
        ),
      }}
      list={{
        title: "Stock",
        content: (
          <DataTable
            data={loaderData.frames}
            columns={columns}
            getRowId={(f) => f.id}
            caption="Frames in stock"
            empty="No frames yet."
          />
        ),
      }}
    />
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Frames · Dioptra" }];
