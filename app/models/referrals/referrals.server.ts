/**
 * Referrals on the server: building a draft from a signed exam, the letter PDF's content,
 * queueing and delivering the e-mails (pg-boss, retried, each message sent at most once),
 * the recipient's actions through the signed link, and the lists for tracking and the chart.
 * Routes import from here; the modules behind it are this folder's own. Importing this module
 * declares the referral e-mail queue (delivery.server.ts), so the worker's job list imports it.
 */
export { formatDate, isUuid, practice, ReferralError, referenceOf } from "./common.server";
export { gpLine, prefill, snapshotOf, triageProposal } from "./snapshot.server";
export { candidateExams, createDraft, discardDraft, loadReferral, referableExam, updateDraft } from "./drafts.server";
export { renderLetter } from "./letter.server";
export {
  chaseReferral,
  deliverReferralMessage,
  latestMessage,
  retryMessage,
  sendReferral,
  smtpSender,
  useReferralMailSender,
  withdrawReferral,
} from "./delivery.server";
export { acknowledge, publicSummary, reply, REPLY_FILE_MAX_BYTES, setAppointment, sniffType } from "./recipient.server";
export { referralsForChart, trackingPage, trackingRows, TRACKING_SORTS } from "./tracking.server";
export { letterChoices, letterPatient, lettersOfExam, openReplyFile, referralPageData } from "./page.server";
