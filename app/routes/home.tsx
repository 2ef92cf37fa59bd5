import { dateTimeFormat } from "~/lib/format/intl";
import { redirect } from "react-router";
import type { Route } from "./+types/home";
import { FrontDeskView } from "./home/front-desk";
import { OptometristView } from "./home/optometrist";
import { OwnerView } from "./home/owner";
import { PageHeader } from "~/components/page-header";
import { frontDeskHome, homePractice, optometristHome, ownerHome } from "~/models/home/home.server";
import { homeFor, requireUser } from "~/utils/auth.server";
import { ROLE_LABEL } from "~/utils/nav";

/** Each role's home: the front desk's day, an optometrist's own list and reviews, the owner's figures. */
export async function loader({ request }: Route.LoaderArgs) {
  const user = await requireUser(request);
  if (user.role === "patient") throw redirect(homeFor(user.role));
  const practice = await homePractice();
  const home =
    user.role === "owner"
      ? await ownerHome()
      : user.role === "optometrist"
        ? await optometristHome(user)
        : await frontDeskHome();
  return {
    user: { name: user.name, role: user.role },
    practice,
    home,
  };
}

export default function Home({ loaderData }: Route.ComponentProps) {
  const { user, practice, home } = loaderData;
  const today = dateTimeFormat("en-GB", { dateStyle: "full", timeZone: practice.timeZone }).format(new Date());
  return (
    <>
      <PageHeader
        title={`Today at ${practice.name}`}
        description={`${today} · signed in as ${user.name}, ${ROLE_LABEL[user.role].toLowerCase()}`}
      />
      {home.role === "owner" ? (
        <OwnerView home={home} />
      ) : home.role === "optometrist" ? (
        <OptometristView home={home} />
      ) : (
        <FrontDeskView home={home} currency={practice.currency} />
      )}
    </>
  );
}

export const meta: Route.MetaFunction = () => [{ title: "Today · Dioptra" }];
