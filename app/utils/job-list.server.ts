/**
 * Every queue the worker runs: import the module that declares it (with defineJob) here.
 * Other areas add their own line (for example billing receipts, referral letters).
 */
import "~/models/schedule/reminders.server";
import "~/models/schedule/recalls.server";
import "~/models/referrals/referrals.server";
import "~/models/users/account-mail.server";
import "~/models/orders/order-mail.server";
