import { StatusBadge } from "~/components/ui/notice";
import { STATUS_LABEL, type Status } from "~/lib/scheduling/status";

const TONE: Record<Status, "info" | "success" | "warning" | "error"> = {
  booked: "info",
  confirmed: "info",
  arrived: "warning",
  in_exam: "info",
  completed: "success",
  cancelled: "error",
  no_show: "error",
};

/** An appointment status as a word with an icon (colour is only a third cue). */
export function AppointmentStatus({ status }: { status: Status }) {
  return <StatusBadge tone={TONE[status]}>{STATUS_LABEL[status]}</StatusBadge>;
}
