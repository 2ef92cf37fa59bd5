/**
 * Recipient (referral) and pay-by-link tokens are accepted in one spelling only. Base64 decoders
 * accept "+" and "/" for "-" and "_", "=" padding, stray characters, and a changed last character
 * whose spare bits are dropped (RFC 4648 §3.5, "canonical encoding"); numbers parse with leading
 * zeros. None of those spellings may open a link.
 */
import { randomUUID } from "node:crypto";
import { describe, expect, it } from "vitest";
import { signPayLink, verifyPayLink } from "~/models/billing/checkout.server";
import { signLink, verifyLink } from "~/models/referrals/links.server";

/** Spellings of `token` that decode to the same bytes or numbers but are not the token. */
function altered(token: string) {
  const last = token.at(-1)!;
  // The last of 43 base64url characters carries 4 bits of the signature and 2 spare bits.
  const alphabet = "ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789-_";
  const i = alphabet.indexOf(last);
  const sameBits = alphabet[(i & ~3) | ((i + 1) & 3)]!;
  return [
    `${token.slice(0, -1)}${sameBits}`,
    `${token}=`,
    `${token}==`,
    `${token}!`,
    `${token} `,
    ` ${token}`,
    `${token}%20`,
    token.replaceAll("-", "+").replaceAll("_", "/"),
    `${token.slice(0, -1)}\n${last}`,
  ].filter((t) => t !== token);
}

describe("pay-by-link tokens", () => {
  it("accept the issued spelling and refuse every other", () => {
    const invoiceId = randomUUID();
    const token = signPayLink(invoiceId);
    expect(verifyPayLink(token)).toMatchObject({ ok: true, invoiceId });
    const [id, exp, sig] = token.split(".");
    const spellings = [
      ...altered(token),
      `${id}.0${exp}.${sig}`,
      `${id}.00${exp}.${sig}`,
      `${id!.toUpperCase()}.${exp}.${sig}`,
      `${id}.+${exp}.${sig}`,
    ];
    for (const t of spellings) expect(verifyPayLink(t), t).toEqual({ ok: false, reason: "invalid" });
  });
});

describe("recipient link tokens", () => {
  it("accept the issued spelling and refuse every other", async () => {
    const token = signLink({
      id: randomUUID(),
      referralId: randomUUID(),
      expiresAt: new Date(Date.now() + 86_400_000),
    });
    // The signature holds; the (made-up) link has no row, so it is "unknown" rather than refused for its spelling.
    expect(await verifyLink(token)).toMatchObject({ ok: false, reason: "unknown" });
    const [payload, sig] = token.split(".");
    const spellings = [...altered(token), `${payload}=.${sig}`, `${payload}.${sig}=`];
    for (const t of spellings) {
      const check = await verifyLink(t);
      expect(["malformed", "bad signature"], `${t}: ${check.ok ? "ok" : check.reason}`).toContain(
        check.ok ? "ok" : check.reason,
      );
    }
  });
});
