/**
 * The local e-mail stand-in: an SMTP server on loopback that keeps every message it
 * receives (as .eml files in a folder, so a restart loses nothing) and a small HTTP API
 * the demo mailbox page and the tests read.
 *
 *   SMTP  127.0.0.1:$SMTP_PORT         (default 2525)
 *   HTTP  127.0.0.1:$MAILBOX_API_PORT  (default 2526)
 *     GET    /messages                 newest first, without bodies
 *     GET    /messages/:id             one message with text, html, headers and attachment list
 *     GET    /messages/:id/raw         the message as received (RFC 5322)
 *     GET    /messages/:id/attachments/:index
 *     DELETE /messages                 empties the mailbox
 */
import { mkdirSync, readdirSync, readFileSync, rmSync, writeFileSync } from "node:fs";
import { createServer } from "node:http";
import { join } from "node:path";
import { simpleParser, type ParsedMail } from "mailparser";
import { SMTPServer } from "smtp-server";

const smtpPort = Number(process.env.SMTP_PORT ?? 2525);
const apiPort = Number(process.env.MAILBOX_API_PORT ?? 2526);
const folder = process.env.MAILBOX_DIR ?? join(process.cwd(), ".data", "mail");
mkdirSync(folder, { recursive: true });

type Stored = { id: string; receivedAt: string; raw: Buffer };

function list(): Stored[] {
  return readdirSync(folder)
    .filter((f) => f.endsWith(".eml"))
    .sort()
    .reverse()
    .map((f) => ({
      id: f.replace(/\.eml$/, ""),
      receivedAt: new Date(Number(f.split("-")[0])).toISOString(),
      raw: readFileSync(join(folder, f)),
    }));
}

const parsedCache = new Map<string, ParsedMail>();
async function parse(m: Stored) {
  let parsed = parsedCache.get(m.id);
  if (!parsed) {
    parsed = await simpleParser(m.raw);
    parsedCache.set(m.id, parsed);
  }
  return parsed;
}

function addresses(field: ParsedMail["to"]): string[] {
  if (!field) return [];
  const groups = Array.isArray(field) ? field : [field];
  return groups.flatMap((g) => g.value.map((a) => a.address ?? "")).filter(Boolean);
}

async function summary(m: Stored) {
  const p = await parse(m);
  return {
    id: m.id,
    receivedAt: m.receivedAt,
    from: p.from?.text ?? "",
    to: addresses(p.to),
    subject: p.subject ?? "",
    attachments: p.attachments.map((a, index) => ({
      index,
      filename: a.filename ?? `attachment-${index}`,
      contentType: a.contentType,
      size: a.size,
    })),
  };
}

let counter = 0;
const smtp = new SMTPServer({
  disabledCommands: ["STARTTLS", "AUTH"],
  authOptional: true,
  logger: false,
  size: 25 * 1024 * 1024,
  onData(stream, _session, callback) {
    const chunks: Buffer[] = [];
    stream.on("data", (c: Buffer) => chunks.push(c));
    stream.on("end", () => {
      const id = `${Date.now()}-${String(++counter).padStart(6, "0")}-${process.pid}`;
      writeFileSync(join(folder, `${id}.eml`), Buffer.concat(chunks));
      callback();
    });
  },
});
smtp.on("error", (e) => console.error("[mail] smtp error", e.message));
smtp.listen(smtpPort, "127.0.0.1", () => console.log(`[mail] SMTP stand-in on 127.0.0.1:${smtpPort}`));

const api = createServer(async (req, res) => {
  const send = (status: number, body: unknown) => {
    res.writeHead(status, { "content-type": "application/json" });
    res.end(JSON.stringify(body));
  };
  try {
    const url = new URL(req.url ?? "/", "http://127.0.0.1");
    const parts = url.pathname.split("/").filter(Boolean);
    if (parts[0] !== "messages") return send(404, { error: "not found" });
    if (req.method === "DELETE" && parts.length === 1) {
      for (const f of readdirSync(folder)) rmSync(join(folder, f));
      parsedCache.clear();
      return send(200, { ok: true });
    }
    const all = list();
    if (parts.length === 1) {
      const to = url.searchParams.get("to")?.toLowerCase();
      const items = await Promise.all(all.map(summary));
      return send(200, to ? items.filter((m) => m.to.some((a) => a.toLowerCase() === to)) : items);
    }
    const found = all.find((m) => m.id === parts[1]);
    if (!found) return send(404, { error: "no such message" });
    const p = await parse(found);
    if (parts.length === 2) {
      // Header fields as sent, unfolded, by lower-case name (the last one wins when repeated).
      const headers = Object.fromEntries(
        p.headerLines.map((h) => [
          h.key,
          h.line
            .slice(h.line.indexOf(":") + 1)
            .replace(/\r?\n[ \t]+/g, " ")
            .trim(),
        ]),
      );
      return send(200, {
        ...(await summary(found)),
        replyTo: p.replyTo?.text ?? "",
        headers,
        text: p.text ?? "",
        html: typeof p.html === "string" ? p.html : "",
      });
    }
    if (parts[2] === "raw") {
      res.writeHead(200, { "content-type": "message/rfc822" });
      return res.end(found.raw);
    }
    if (parts[2] === "attachments" && parts[3] !== undefined) {
      const a = p.attachments[Number(parts[3])];
      if (!a) return send(404, { error: "no such attachment" });
      res.writeHead(200, {
        "content-type": a.contentType,
        "content-disposition": `attachment; filename="${(a.filename ?? "file").replace(/"/g, "")}"`,
      });
      return res.end(a.content);
    }
    return send(404, { error: "not found" });
  } catch (error) {
    send(500, { error: (error as Error).message });
  }
});
api.listen(apiPort, "127.0.0.1", () => console.log(`[mail] mailbox API on 127.0.0.1:${apiPort}`));

const shutdown = () => {
  smtp.close(() => undefined);
  api.close(() => process.exit(0));
  setTimeout(() => process.exit(0), 500).unref();
};
process.on("SIGTERM", shutdown);
process.on("SIGINT", shutdown);
