import { parseWithZod } from "@conform-to/zod/v4";
import { data } from "react-router";
import { z } from "zod";
import type { Route } from "./+types/book";
import { BookingForm } from "./booking-form";
import { bookingSchema } from "~/models/schedule/schedule-api.server";
import { patientOption, scheduleReferenceData } from "~/models/schedule/schedule-data.server";
import { GeneralErrorBoundary } from "~/components/error-boundary";
import { PageHeader } from "~/components/page-header";
import { Card } from "~/components/ui/card";
import { formatLocal, localParts } from "~/lib/scheduling/time";
import { requireRole, STAFF_ROLES } from "~/utils/auth.server";
import { bookAppointment, BookingError, practiceSchedule } from "~/models/schedule/schedule.server";
import { siteTimeZone } from "~/models/schedule/sites.server";
import { redirectWithToast } from "~/utils/toast.server";

/** The booking page: reached from a patient's chart (?patientId=) or without the calendar. */
export async function loader({ request }: Route.LoaderArgs) {
  await requireRole(request, STAFF_ROLES);
  const url = new URL(request.url);
  const patientId = url.searchParams.get("patientId");
  const patient = patientId && z.uuid().safeParse(patientId).success ? await patientOption(patientId) : null;
  const { providers, types, sites, rooms } = await scheduleReferenceData();
  const provider = url.searchParams.get("provider");
  const start = url.searchParams.get("start");
  return {
    providers: providers.map(({ id, name }) => ({ id, name })),
    types,
    places: { sites: sites.map(({ id, name }) => ({ id, name })), rooms },
    defaults: {
      patient,
      providerId: provider && providers.some((p) => p.id === provider) ? provider : undefined,
      start: start && /^\d{4}-\d{2}-\d{2}T\d{2}:\d{2}$/.test(start) ? start : undefined,
    },
  };
}

function safeReturn(value: FormDataEntryValue | null) {
  return typeof value === "string" && value.startsWith("/") && !value.startsWith("//") ? value : null;
}

export async function action({ request }: Route.ActionArgs) {
  const user = await requireRole(request, STAFF_ROLES);
  const formData = await request.formData();
  // Wall times are read at the site chosen (each site keeps its own zone), else in the practice's.
  const timeZone = (await siteTimeZone(formData.get("siteId"))) ?? (await practiceSchedule()).timeZone;
  const submission = parseWithZod(formData, { schema: bookingSchema(timeZone) });
  if (submission.status !== "success") return data(submission.reply(), { status: 400 });
  try {
    const appt = await bookAppointment(user, submission.value, request);
    const day = localParts(appt.startsAt, timeZone).date;
    const to = safeReturn(formData.get("returnTo")) ?? `/schedule?date=${day}`;
    return redirectWithToast(to, {
      kind: "success",
      title: "Appointment booked",
      description: `${formatLocal(appt.startsAt, timeZone)}. The confirmation e-mail is on its way.`,
    });
  } catch (error) {
    if (error instanceof BookingError) {
      return data(submission.reply({ formErrors: [error.message], fieldErrors: error.fieldErrors }), {
        status: error.status,
      });
    }
    throw error;
  }
}

export default function BookPage({ loaderData }: Route.ComponentProps) {
  return (
    <>
      <PageHeader
        title="Book an appointment"
        description="Find the patient, choose the type, the provider and the time."
      />
      <Card>
        <BookingForm
          providers={loaderData.providers}
          types={loaderData.types}
          defaults={loaderData.defaults}
          places={loaderData.places}
        />
      </Card>
    </>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Book an appointment · Dioptra" }];

export function ErrorBoundary() {
  return <GeneralErrorBoundary />;
}
