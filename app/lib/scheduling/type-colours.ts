/**
 * Colours of appointment types in the calendar: a pale fill, a strong edge and dark text, so the
 * text keeps a contrast of at least 4.5:1 whatever the type. The type's name is always printed in
 * the event and in the legend beside its swatch, so colour is never the only cue.
 */
export type TypeColour = { fill: string; edge: string; ink: string };

const PALETTE: readonly TypeColour[] = [
  { fill: "#dff1f2", edge: "#0d5c62", ink: "#0b2f33" },
  { fill: "#fbe9d7", edge: "#a14a00", ink: "#3d1d00" },
  { fill: "#e6e4f7", edge: "#4b3fa3", ink: "#221a52" },
  { fill: "#e3f1df", edge: "#2f6b1f", ink: "#16330e" },
  { fill: "#f8e1ea", edge: "#9c2457", ink: "#440d24" },
  { fill: "#e2ebf7", edge: "#1f4f99", ink: "#0e2549" },
  { fill: "#f4f0d5", edge: "#76610a", ink: "#332a02" },
  { fill: "#ececec", edge: "#4a4a4a", ink: "#1d1d1d" },
];

/** One colour per type id, in the order given (the schedule lists types by name), repeating after eight. */
export function typeColours(typeIds: readonly string[]): Record<string, TypeColour> {
  return Object.fromEntries(typeIds.map((id, i) => [id, PALETTE[i % PALETTE.length]!]));
}
