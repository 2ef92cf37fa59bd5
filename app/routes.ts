import { type RouteConfig, index, layout, prefix, route } from "@react-router/dev/routes";

export default [
  route("healthz", "routes/api/healthz.ts"),

  route("login", "routes/auth/login.tsx"),
  route("logout", "routes/auth/logout.ts"),
  route("forgot-password", "routes/auth/forgot-password.tsx"),
  route("reset-password", "routes/auth/reset-password.tsx"),

  ...prefix("dev/mailbox", [
    index("routes/dev/mailbox.tsx"),
    route(":messageId/attachments/:index", "routes/dev/mailbox-attachment.ts"),
  ]),

  layout("routes/layout.tsx", [
    index("routes/home.tsx"),
    route("account", "routes/auth/account.tsx"),
    route("tools/rx", "routes/tools/rx.tsx"),
    ...prefix("settings", [
      layout("routes/settings/layout.tsx", [
        index("routes/settings/practice.tsx"),
        route("users", "routes/settings/users.tsx"),
      ]),
    ]),
    ...prefix("portal", [index("routes/portal/home.tsx")]),
    route("*", "routes/not-found.tsx"),
  ]),
] satisfies RouteConfig;
