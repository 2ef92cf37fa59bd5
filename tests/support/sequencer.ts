import { BaseSequencer, type TestSpecification } from "vitest/node";

/**
 * Longest browser files first, so the parallel stacks finish together instead of one long file
 * starting last. Vitest orders by the durations it remembers from earlier runs, but a fresh clone
 * has none and falls back to file size, which says little about a browser flow's length: these
 * are the files measured as the longest, slowest first.
 */
const LONGEST_FIRST = [
  "malformed-requests",
  "scale-out",
  "clinical-safety",
  "foundation",
  "front-desk",
  "chart",
  "referrals",
  "billing",
];

function rank(spec: TestSpecification) {
  const i = LONGEST_FIRST.findIndex((name) => spec.moduleId.endsWith(`/${name}.e2e.ts`));
  return i === -1 ? LONGEST_FIRST.length : i;
}

export default class LongestFirstSequencer extends BaseSequencer {
  override async sort(files: TestSpecification[]) {
    const sorted = await super.sort(files);
    // Array.prototype.sort is stable: within a rank (and across projects) Vitest's order stays.
    return sorted.sort((a, b) => {
      if (a.project.name !== b.project.name) return 0;
      return rank(a) - rank(b);
    });
  }
}
