/** Errors of the mail stage (preparing and delivering statement e-mails). */
import { QuarterlineError } from '../errors.ts';

/**
 * The mail run cannot start or cannot go on: an unreadable run folder, a
 * damaged ledger, a server that refuses our credentials. The message says
 * what was found, what was expected and what to do; it never holds a
 * password.
 */
export class MailError extends QuarterlineError {}
