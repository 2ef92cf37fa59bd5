import { type RouteConfig, index, layout, prefix, route } from "@react-router/dev/routes";

export default [
  route("healthz", "routes/api/healthz.ts"),
  route("api/portal-invite", "routes/api/portal-invite.ts"),
  route("portal/invoices/:id/invoice.pdf", "routes/portal/documents.ts", { id: "portal-invoice-pdf" }),
  route("portal/payments/:id/receipt.pdf", "routes/portal/documents.ts", { id: "portal-receipt-pdf" }),

  route("login", "routes/auth/login.tsx"),
  route("logout", "routes/auth/logout.ts"),
  route("forgot-password", "routes/auth/forgot-password.tsx"),
  route("reset-password", "routes/auth/reset-password.tsx"),
  route("sign-in-link", "routes/auth/sign-in-link.tsx"),
  route("sign-in-link/verify", "routes/auth/sign-in-link-verify.tsx"),

  ...prefix("dev/mailbox", [
    index("routes/dev/mailbox.tsx"),
    route(":messageId/attachments/:index", "routes/dev/mailbox-attachment.ts"),
  ]),

  route("api/patients", "routes/api/patients.ts"),
  route("api/uploads", "routes/api/uploads.ts"),
  route("patients/:patientId/prescriptions/:prescriptionId/pdf", "routes/patients/prescription-pdf.ts"),
  route("patients/:patientId/documents/:documentId/review", "routes/patients/document-review.ts"),
  route("patients/:patientId/documents/:documentId/:variant", "routes/patients/document-file.ts"),

  route("api/appointments", "routes/api/appointments.ts"),
  route("api/appointments/:appointmentId", "routes/api/appointments-item.ts"),
  route("api/schedule-patients", "routes/api/schedule-patients.ts"),
  route("schedule/recalls/batches/:batchId", "routes/schedule/recall-progress.ts"),

  route("api/webhooks/stripe", "routes/api/webhooks/stripe.ts"),
  route("pay/:token", "routes/pay/pay.tsx"),
  route("pay/:token/invoice.pdf", "routes/pay/invoice-pdf.ts"),
  route("unsubscribe/:token", "routes/portal/unsubscribe.tsx"),
  route("billing/invoices/:invoiceId/invoice.pdf", "routes/billing/invoice-pdf.ts"),
  route("billing/payments/:paymentId/receipt.pdf", "routes/billing/receipt-pdf.ts"),
  route("billing/takings.csv", "routes/billing/takings-csv.ts"),

  route("orders/:orderId/order.pdf", "routes/orders/order-pdf.ts"),
  route("referrals/:referralId/letter.pdf", "routes/referrals/letter-pdf.ts"),
  route("referrals/:referralId/replies/:replyId/file", "routes/referrals/reply-file.ts"),
  route("r/:token", "routes/referrals/reply.tsx"),
  route("r/:token/letter.pdf", "routes/referrals/reply-letter.ts"),

  layout("routes/layout.tsx", [
    index("routes/home.tsx"),
    ...prefix("referrals", [
      index("routes/referrals/index.tsx"),
      route("new", "routes/referrals/new.tsx"),
      route(":referralId", "routes/referrals/referral.tsx"),
    ]),
    ...prefix("billing", [
      index("routes/billing/index.tsx"),
      route("invoices/new", "routes/billing/invoice-new.tsx"),
      route("invoices/:invoiceId", "routes/billing/invoice.tsx"),
      route("takings", "routes/billing/takings.tsx"),
      route("balances", "routes/billing/balances.tsx"),
    ]),
    ...prefix("patients", [
      index("routes/patients/index.tsx"),
      route("new", "routes/patients/new.tsx"),
      route(":patientId", "routes/patients/chart.tsx"),
      route(":patientId/edit", "routes/patients/edit.tsx"),
      route(":patientId/exams/:examId", "routes/exams/exam.tsx"),
    ]),
    ...prefix("schedule", [
      index("routes/schedule/index.tsx"),
      route("day", "routes/schedule/day.tsx"),
      route("book", "routes/schedule/book.tsx"),
      route("appointments/:appointmentId", "routes/schedule/appointment.tsx"),
      route("messages", "routes/schedule/messages.tsx"),
      route("recalls", "routes/schedule/recalls.tsx"),
    ]),
    ...prefix("orders", [
      index("routes/orders/index.tsx"),
      route("new", "routes/orders/new.tsx"),
      route("reports", "routes/orders/reports.tsx"),
      route(":orderId", "routes/orders/order.tsx"),
    ]),
    route("account", "routes/auth/account.tsx"),
    route("tools/rx", "routes/tools/rx.tsx"),
    ...prefix("settings", [
      layout("routes/settings/layout.tsx", [
        index("routes/settings/practice.tsx"),
        route("users", "routes/settings/users.tsx"),
        route("recipients", "routes/settings/recipients.tsx"),
        route("appointment-types", "routes/settings/appointment-types.tsx"),
        route("hours", "routes/settings/hours.tsx"),
        route("sites", "routes/settings/sites.tsx"),
        route("closures", "routes/settings/closures.tsx"),
        route("fees", "routes/settings/fees.tsx"),
        route("frames", "routes/settings/frames.tsx"),
        route("contact-lenses", "routes/settings/contact-lenses.tsx"),
        route("labs", "routes/settings/labs.tsx"),
      ]),
    ]),
    ...prefix("portal", [
      index("routes/portal/home.tsx"),
      route("book", "routes/portal/book.tsx"),
      route("invoices", "routes/portal/invoices.tsx"),
      route("orders", "routes/portal/orders.tsx"),
      route("prescriptions", "routes/portal/prescriptions.tsx"),
      route("reminders", "routes/portal/reminders.tsx"),
    ]),
    route("*", "routes/not-found.tsx"),
  ]),
] satisfies RouteConfig;
