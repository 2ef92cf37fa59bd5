import { Fragment } from "react";
import { Link } from "react-router";
import type { Route } from "./+types/mailbox";
import { GeneralErrorBoundary } from "~/components/error-boundary";
import { Notice } from "~/components/ui/notice";
import { mailboxFetch, requireDemoMode, type MailboxMessage, type MailboxSummary } from "~/utils/mailbox.server";

export async function loader({ request }: Route.LoaderArgs) {
  requireDemoMode();
  const id = new URL(request.url).searchParams.get("id");
  const list = (await (await mailboxFetch("/messages")).json()) as MailboxSummary[];
  let selected: MailboxMessage | null = null;
  if (id) {
    const res = await mailboxFetch(`/messages/${encodeURIComponent(id)}`);
    if (res.ok) selected = (await res.json()) as MailboxMessage;
  }
  return { list, selected };
}

/** Plain text with its web addresses made into links. */
function Linkified({ text }: { text: string }) {
  const parts = text.split(/(https?:\/\/[^\s<>"]+)/g);
  return (
    <>
      {parts.map((part, i) =>
        /^https?:\/\//.test(part) ? (
          <a key={i} href={part} className="break-all font-semibold text-accent-700 underline underline-offset-4">
            {part}
          </a>
        ) : (
          <Fragment key={i}>{part}</Fragment>
        ),
      )}
    </>
  );
}

export default function Mailbox({ loaderData }: Route.ComponentProps) {
  const { list, selected } = loaderData;
  return (
    <main id="main" className="mx-auto max-w-7xl px-4 py-8 sm:px-6">
      <h1 className="text-2xl">Demo mailbox</h1>
      <p className="mt-1 mb-4 text-muted">
        Every e-mail the app has sent through the local SMTP stand-in. Demo mode only: this page does not exist in
        production.
      </p>
      <div className="grid gap-6 lg:grid-cols-[24rem_1fr]">
        <section aria-label="Messages" className="rounded-lg border border-line bg-white">
          {list.length === 0 ? <p className="p-4 text-muted">No messages yet.</p> : null}
          <ul className="divide-y divide-line">
            {list.map((m) => (
              <li key={m.id}>
                <Link
                  to={`?id=${m.id}`}
                  className={`block px-4 py-3 hover:bg-canvas ${selected?.id === m.id ? "bg-accent-50" : ""}`}
                  aria-current={selected?.id === m.id ? "true" : undefined}
                >
                  <span className="block font-semibold">{m.subject || "(no subject)"}</span>
                  <span className="block text-sm text-muted">To {m.to.join(", ")}</span>
                  <span className="block text-xs text-muted">
                    {new Date(m.receivedAt).toLocaleString("en-GB")}
                    {m.attachments.length
                      ? ` · ${m.attachments.length} attachment${m.attachments.length > 1 ? "s" : ""}`
                      : ""}
                  </span>
                </Link>
              </li>
            ))}
          </ul>
        </section>
        <section aria-label="Message" className="rounded-lg border border-line bg-white p-6">
          {selected ? (
            <article>
              <h2 className="text-xl">{selected.subject}</h2>
              <dl className="mt-2 grid grid-cols-[4rem_1fr] gap-y-1 text-sm">
                <dt className="text-muted">From</dt>
                <dd>{selected.from}</dd>
                <dt className="text-muted">To</dt>
                <dd>{selected.to.join(", ")}</dd>
              </dl>
              <pre className="mt-4 font-sans whitespace-pre-wrap">
                <Linkified text={selected.text} />
              </pre>
              {selected.attachments.length ? (
                <div className="mt-6">
                  <h3 className="font-semibold">Attachments</h3>
                  <ul className="mt-2 space-y-1">
                    {selected.attachments.map((a) => (
                      <li key={a.index}>
                        <a
                          href={`/dev/mailbox/${selected.id}/attachments/${a.index}`}
                          className="font-semibold text-accent-700 underline underline-offset-4"
                        >
                          {a.filename}
                        </a>{" "}
                        <span className="text-sm text-muted">
                          ({a.contentType}, {Math.ceil(a.size / 1024)} kB)
                        </span>
                      </li>
                    ))}
                  </ul>
                </div>
              ) : null}
            </article>
          ) : (
            <Notice tone="info" title="Choose a message">
              Pick a message on the left to read it.
            </Notice>
          )}
        </section>
      </div>
    </main>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Demo mailbox · Dioptra" }];

export function ErrorBoundary() {
  return <GeneralErrorBoundary />;
}
