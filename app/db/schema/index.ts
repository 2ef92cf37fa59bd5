export * from "./audit";
export * from "./auth";
export * from "./patients";
export * from "./practice";
export * from "./relations";
