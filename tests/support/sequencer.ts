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
    // Vitest's order of projects stays; within a project the known longest files go first
    // (Array.prototype.sort is stable, so Vitest's order stays within a rank).
    const projects = [...new Set(sorted.map((s) => s.project.name))];
    return sorted.sort(
      (a, b) => projects.indexOf(a.project.name) - projects.indexOf(b.project.name) || rank(a) - rank(b),
    );
  }
}
