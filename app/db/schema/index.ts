export * from "./audit";
export * from "./auth";
export * from "./billing";
export * from "./exams";
export * from "./patients";
export * from "./practice";
export * from "./relations";
export * from "./schedule";
