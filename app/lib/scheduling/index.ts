export * from "./closures";
export * from "./hours";
export * from "./recall";
export * from "./status";
export * from "./time";
