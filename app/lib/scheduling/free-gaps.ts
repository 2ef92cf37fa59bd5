/**
 * The free stretches of one clinician's day: working hours less breaks, less the appointments that
 * hold time, from `notBefore` on. Minutes after local midnight, in the zone of the working hours.
 */
export type Span = { startMinute: number; endMinute: number };

export function freeGaps(
  working: Span | undefined,
  breaks: readonly Span[],
  taken: readonly Span[],
  opts: { notBefore?: number; minimum?: number } = {},
): Span[] {
  if (!working) return [];
  const minimum = opts.minimum ?? 15;
  const busy = [...breaks, ...taken].sort((a, b) => a.startMinute - b.startMinute);
  const out: Span[] = [];
  let from = Math.max(working.startMinute, opts.notBefore ?? 0);
  for (const b of busy) {
    if (b.endMinute <= from) continue;
    if (b.startMinute >= working.endMinute) break;
    if (b.startMinute - from >= minimum) out.push({ startMinute: from, endMinute: b.startMinute });
    from = Math.max(from, b.endMinute);
  }
  if (working.endMinute - from >= minimum) out.push({ startMinute: from, endMinute: working.endMinute });
  return out;
}
