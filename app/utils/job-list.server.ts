/**
 * Every queue the worker runs: import the module that declares it (with defineJob) here.
 * Other areas add their own line (for example billing receipts, referral letters).
 */
import "./reminders.server";
import "./recalls.server";
import "~/routes/referrals/referrals.server";
import "./account-mail.server";
import "~/models/orders/order-mail.server";
