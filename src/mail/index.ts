/**
 * The `mail` verb: prepare one e-mail per client statement of a run
 * (`prepareMail`), deliver them over SMTP at most once each (`sendMail`),
 * and report (`formatMailSummary`, `mailExitCode`). docs/mail.md describes
 * the ledger protocol and the choices behind it.
 */
export { checkAddress, type AddressCheck } from './address.ts';
export { MailError } from './errors.ts';
export { LEDGER_FILE, readLedger, deliveryStates, type DeliveryState, type LedgerEvent, type LedgerStatus } from './ledger.ts';
export { MAIL_FOLDER, prepareMail, type AccountProblem, type PrepareOptions, type PreparedMessage, type PreparedRun } from './prepare.ts';
export { DEFAULT_RETRY_DELAYS_MS, LOCK_FILE, sendMail, type SendOptions } from './send.ts';
export { parseSmtpUrl, type SmtpEndpoint, type SmtpTlsOptions } from './smtp.ts';
export {
  formatMailSummary, mailExitCode, summaryOfPrepared,
  type FailedEntry, type MailSummary, type SentEntry, type SkippedEntry, type UnknownEntry,
} from './summary.ts';
