/** The day flow of an appointment and the words shown for each status. */
export const APPOINTMENT_STATUSES = [
  "booked",
  "confirmed",
  "arrived",
  "in_exam",
  "completed",
  "cancelled",
  "no_show",
] as const;
export type Status = (typeof APPOINTMENT_STATUSES)[number];

/** Statuses that hold the provider's time (the exclusion constraint ignores the others). */
export const LIVE_STATUSES: readonly Status[] = ["booked", "confirmed", "arrived", "in_exam", "completed"];

export const STATUS_LABEL: Record<Status, string> = {
  booked: "Booked",
  confirmed: "Confirmed",
  arrived: "Arrived",
  in_exam: "In exam",
  completed: "Completed",
  cancelled: "Cancelled",
  no_show: "Did not attend",
};

/** Which changes are allowed from each status. Finished visits are not reopened. */
export const NEXT_STATUSES: Record<Status, readonly Status[]> = {
  booked: ["confirmed", "arrived", "cancelled", "no_show"],
  confirmed: ["arrived", "booked", "cancelled", "no_show"],
  arrived: ["in_exam", "completed", "confirmed", "no_show"],
  in_exam: ["completed", "arrived"],
  completed: [],
  cancelled: [],
  no_show: ["booked"],
};

/** Statuses that only happen on the day of the visit; setting one on another day needs confirming. */
export const DAY_OF_VISIT_STATUSES: readonly Status[] = ["arrived", "in_exam", "completed", "no_show"];

/** A change back along the day flow: undoing the last step rather than taking a new one. */
export function isUndo(from: Status, to: Status): boolean {
  return UNDO_COMMAND[from]?.to === to;
}

/** The undo of each step, worded as an undo (not as the status it returns to). */
export const UNDO_COMMAND: Partial<Record<Status, { to: Status; label: string }>> = {
  confirmed: { to: "booked", label: "Undo confirmation" },
  arrived: { to: "confirmed", label: "Undo arrival" },
  in_exam: { to: "arrived", label: "Undo exam start" },
  no_show: { to: "booked", label: "Undo did not attend" },
};

export function canChangeStatus(from: Status, to: Status): boolean {
  return NEXT_STATUSES[from].includes(to);
}

/** Moving or resizing is allowed only before the patient arrives. */
export function isMovable(status: Status): boolean {
  return status === "booked" || status === "confirmed";
}

/** Status words for commands that change to it. */
export const STATUS_COMMAND: Record<Status, string> = {
  booked: "Reinstate",
  confirmed: "Mark confirmed",
  arrived: "Mark arrived",
  in_exam: "Start exam",
  completed: "Mark completed",
  cancelled: "Cancel",
  no_show: "Mark did not attend",
};
