/**
 * One statement e-mail: the wording from the Nunjucks templates in
 * templates/mail, the MIME message from nodemailer's message composer.
 *
 * Everything the book supplies (client, adviser and firm names, addresses)
 * is untrusted text. It reaches the message only through:
 * - headers: nodemailer encodes display names (RFC 2047) and quotes them
 *   (RFC 5322), so no name can add a recipient or a header; control and
 *   direction-formatting characters are removed from names first;
 * - the HTML part: Nunjucks autoescape, and <bdi> around every name so that
 *   right-to-left text or a direction override stays inside the name;
 * - the text part: control characters become spaces, and a name holding
 *   right-to-left text or direction controls is wrapped in Unicode isolates
 *   (FSI … PDI), the plain-text counterpart of <bdi>.
 *
 * The Message-ID is derived from the content (period, addresses, names,
 * subject, both parts, the attachment's SHA-256): preparing the same message
 * again gives the same Message-ID, and the MIME boundaries are derived from
 * it too, so two preparations differ only in the Date header.
 */
import { createHash } from 'node:crypto';
import { createRequire } from 'node:module';
import { fileURLToPath } from 'node:url';
import MailComposer from 'nodemailer/lib/mail-composer';
import { domainOf } from './address.ts';
import { MailError } from './errors.ts';

/** The folder of the mail templates. */
export const MAIL_TEMPLATES_DIR = fileURLToPath(new URL('../../templates/mail/', import.meta.url));

/** The part of the Nunjucks API used here (nunjucks ships no types). */
interface NunjucksEnvironment {
  render(name: string, context: object): string;
}
interface NunjucksModule {
  readonly Environment: new (loader: unknown, options: {
    readonly autoescape: boolean;
    readonly throwOnUndefined: boolean;
    readonly trimBlocks: boolean;
    readonly lstripBlocks: boolean;
  }) => NunjucksEnvironment;
  readonly FileSystemLoader: new (dir: string, options: { readonly noCache: boolean }) => unknown;
}

const nunjucks = createRequire(import.meta.url)('nunjucks') as NunjucksModule;

/** Two environments over one folder: HTML with autoescape on, plain text without (escaping would corrupt it). */
export interface MailTemplates {
  readonly html: NunjucksEnvironment;
  readonly text: NunjucksEnvironment;
  readonly dir: string;
}

export function loadMailTemplates(dir: string = MAIL_TEMPLATES_DIR): MailTemplates {
  const environment = (autoescape: boolean): NunjucksEnvironment => new nunjucks.Environment(
    new nunjucks.FileSystemLoader(dir, { noCache: true }),
    { autoescape, throwOnUndefined: true, trimBlocks: true, lstripBlocks: true },
  );
  return { html: environment(true), text: environment(false), dir };
}

/** What one statement e-mail says and carries; every text field as found in the run and the book. */
export interface StatementMail {
  readonly account: string;
  readonly client: string;
  readonly adviser: string | null;
  /** As in figures.json: `start` is the close the period starts from, `end` its last day. */
  readonly period: { readonly label: string; readonly start: string; readonly end: string };
  /** Checked addresses (see address.ts). */
  readonly recipient: string;
  readonly sender: string;
  readonly firm: {
    readonly name: string;
    readonly address: string | null;
    readonly email: string | null;
    readonly phone: string | null;
  };
  readonly attachment: { readonly bytes: Uint8Array; readonly signed: boolean };
}

export interface ComposedMail {
  /** The RFC 5322 message, CRLF line ends, as written to RUN/mail/ID.eml. */
  readonly bytes: Buffer;
  /** With angle brackets, as in the header. */
  readonly messageId: string;
  readonly subject: string;
  readonly attachmentFilename: string;
  /** Lower-case hex. */
  readonly attachmentSha256: string;
}

/** Bumped when the derivation of the Message-ID changes, so old and new ids never collide. */
const MESSAGE_ID_SCHEME = 'quarterline-mail-1';

// C0 and C1 control characters, DEL included.
const CONTROL_CHARACTERS = /[\u0000-\u001f\u007f-\u009f]+/g;
// Direction formatting characters: marks, embeddings, overrides, isolates, the Arabic letter mark.
const DIRECTION_CONTROLS = /[\u061c\u200e\u200f\u202a-\u202e\u2066-\u2069]/g;
// Right-to-left scripts (Hebrew to NKo and the presentation forms) and the direction controls.
const NEEDS_ISOLATION = /[\u0590-\u08ff\ufb1d-\ufdff\ufe70-\ufefe\u061c\u200e\u200f\u202a-\u202e\u2066-\u2069]|[\u{10800}-\u{10fff}\u{1e800}-\u{1efff}]/u;
const FIRST_STRONG_ISOLATE = '\u2068';
const POP_DIRECTIONAL_ISOLATE = '\u2069';

/** Untrusted text on one line: control characters (line breaks included) become single spaces. */
export function singleLine(text: string): string {
  return text.replace(CONTROL_CHARACTERS, ' ').replace(/\s+/g, ' ').trim();
}

/** A display name for a header: one line, without direction formatting characters. */
export function headerName(text: string): string {
  return singleLine(text.replace(DIRECTION_CONTROLS, ''));
}

/** A name for the plain-text part: one line, isolated when it holds right-to-left text or direction controls. */
export function isolatedText(text: string): string {
  const line = singleLine(text);
  return NEEDS_ISOLATION.test(line) ? `${FIRST_STRONG_ISOLATE}${line}${POP_DIRECTIONAL_ISOLATE}` : line;
}

const LONG_DATE = new Intl.DateTimeFormat('en-GB', { day: 'numeric', month: 'long', year: 'numeric', timeZone: 'UTC' });

function isoDay(text: string, what: string): Date {
  const match = /^(\d{4})-(\d{2})-(\d{2})$/.exec(text);
  const date = match ? new Date(Date.UTC(Number(match[1]), Number(match[2]) - 1, Number(match[3]))) : null;
  if (!date || Number.isNaN(date.getTime()) || date.toISOString().slice(0, 10) !== text) {
    throw new MailError(`${what} is "${text}", expected a date YYYY-MM-DD`);
  }
  return date;
}

/** The period as the message names it: its label, first and last day in words. */
function periodWords(period: StatementMail['period'], account: string): { label: string; first: string; last: string } {
  const start = isoDay(period.start, `figures.json of ${account}: period.start`);
  const end = isoDay(period.end, `figures.json of ${account}: period.end`);
  const first = new Date(start.getTime() + 86_400_000);
  return { label: singleLine(period.label), first: LONG_DATE.format(first), last: LONG_DATE.format(end) };
}

function sha256Hex(bytes: Uint8Array | string): string {
  return createHash('sha256').update(bytes).digest('hex');
}

function render(environment: NunjucksEnvironment, name: string, context: object, dir: string): string {
  try {
    return environment.render(name, context);
  } catch (error) {
    throw new MailError(`the mail template ${name} in ${dir} could not be rendered: ${error instanceof Error ? error.message : String(error)}`, { cause: error });
  }
}

/** The file name the client sees for the attachment. */
export function attachmentFilename(periodLabel: string, account: string): string {
  return `statement-${periodLabel}-${account}.pdf`.replace(/[^A-Za-z0-9._-]/g, '_');
}

/** Renders the templates and builds the MIME message. `date` becomes the Date header. */
export async function composeStatementMail(mail: StatementMail, templates: MailTemplates, date: Date): Promise<ComposedMail> {
  const period = periodWords(mail.period, mail.account);
  const filename = attachmentFilename(period.label, mail.account);
  const attachmentSha256 = sha256Hex(mail.attachment.bytes);
  const view = (name: (text: string) => string) => ({
    client: name(mail.client),
    adviser: mail.adviser === null || singleLine(mail.adviser) === '' ? null : name(mail.adviser),
    account: mail.account,
    period,
    recipient: mail.recipient,
    attachment: { filename, signed: mail.attachment.signed },
    firm: { name: name(mail.firm.name), address: mail.firm.address === null ? null : name(mail.firm.address) },
    contact: {
      email: name(mail.firm.email ?? mail.sender),
      phone: mail.firm.phone === null ? null : name(mail.firm.phone),
    },
  });
  const textView = view(isolatedText);
  const subject = singleLine(render(templates.text, 'subject.txt.njk', textView, templates.dir));
  const text = render(templates.text, 'statement.txt.njk', textView, templates.dir);
  const html = render(templates.html, 'statement.html.njk', { ...view(singleLine), subject }, templates.dir);
  const fromName = headerName(mail.firm.name);
  const toName = headerName(mail.client);

  const contentHash = sha256Hex(JSON.stringify([
    MESSAGE_ID_SCHEME, period.label, mail.account, mail.sender, fromName, mail.recipient, toName, subject, text, html, filename, attachmentSha256,
  ]));
  const messageId = `<ql.${contentHash.slice(0, 40)}@${domainOf(mail.sender)}>`;
  const composer = new MailComposer({
    from: { name: fromName, address: mail.sender },
    to: { name: toName, address: mail.recipient },
    subject,
    text,
    html,
    messageId,
    date,
    attachments: [{ filename, content: Buffer.from(mail.attachment.bytes), contentType: 'application/pdf' }],
    baseBoundary: contentHash.slice(0, 24),
    disableFileAccess: true,
    disableUrlAccess: true,
    newline: 'windows',
  });
  const bytes = await new Promise<Buffer>((resolve, reject) => {
    composer.compile().build((error, message) => (error ? reject(error) : resolve(message)));
  });
  return { bytes, messageId, subject, attachmentFilename: filename, attachmentSha256 };
}
