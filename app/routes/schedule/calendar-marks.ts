/** The mark printed before each status's word in the calendar and its key. */
export const STATUS_MARK: Record<string, string> = {
  booked: "○",
  confirmed: "◎",
  arrived: "●",
  in_exam: "▶",
  completed: "✓",
  no_show: "✕",
  cancelled: "✕",
};
