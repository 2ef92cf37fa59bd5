import { describe, expect, it } from "vitest";
import { freeGaps } from "./free-gaps";

describe("free stretches of a clinician's day", () => {
  const day = { startMinute: 540, endMinute: 1050 }; // 09:00–17:30
  const lunch = { startMinute: 780, endMinute: 840 }; // 13:00–14:00

  it("is the working day less the break and the appointments", () => {
    const taken = [
      { startMinute: 600, endMinute: 630 },
      { startMinute: 630, endMinute: 650 },
    ];
    expect(freeGaps(day, [lunch], taken)).toEqual([
      { startMinute: 540, endMinute: 600 },
      { startMinute: 650, endMinute: 780 },
      { startMinute: 840, endMinute: 1050 },
    ]);
  });

  it("leaves out stretches shorter than the minimum and the time already past", () => {
    const taken = [{ startMinute: 900, endMinute: 1040 }];
    expect(freeGaps(day, [lunch], taken, { notBefore: 800 })).toEqual([{ startMinute: 840, endMinute: 900 }]);
  });

  it("is empty on a day off", () => {
    expect(freeGaps(undefined, [], [])).toEqual([]);
  });
});
