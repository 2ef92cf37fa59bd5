/**
 * The exam domain's public surface: the record and its reading (exam-records), the referral
 * prompts (exam-prompts) and the saving of sections with their saved/refused state (exam-save).
 */
export * from "./exam-records.server";
export * from "./exam-prompts.server";
export * from "./exam-save.server";
