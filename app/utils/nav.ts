import type { Role } from "~/db/schema/auth";

export type NavItem = { to: string; label: string; roles: readonly Role[] };

/** The navigation, one list for every role: each sees only the areas its role may use. */
export const NAV: readonly NavItem[] = [
  { to: "/", label: "Today", roles: ["owner", "optometrist", "receptionist"] },
  { to: "/schedule", label: "Schedule", roles: ["owner", "optometrist", "receptionist"] },
  { to: "/patients", label: "Patients", roles: ["owner", "optometrist", "receptionist"] },
  { to: "/tools/rx", label: "Rx calculator", roles: ["owner", "optometrist", "receptionist"] },
  { to: "/referrals", label: "Referrals", roles: ["owner", "optometrist", "receptionist"] },
  { to: "/orders", label: "Orders", roles: ["owner", "optometrist", "receptionist"] },
  { to: "/billing", label: "Billing", roles: ["owner", "receptionist"] },
  { to: "/settings", label: "Practice settings", roles: ["owner"] },
  { to: "/portal", label: "My visits", roles: ["patient"] },
  { to: "/portal/invoices", label: "Invoices", roles: ["patient"] },
  { to: "/portal/prescriptions", label: "Prescriptions", roles: ["patient"] },
  { to: "/portal/orders", label: "Glasses and lenses", roles: ["patient"] },
  { to: "/portal/reminders", label: "Reminders", roles: ["patient"] },
];

export function navFor(role: Role) {
  return NAV.filter((item) => item.roles.includes(role));
}

export const ROLE_LABEL: Record<Role, string> = {
  owner: "Practice owner",
  optometrist: "Optometrist",
  receptionist: "Front desk",
  patient: "Patient",
};
