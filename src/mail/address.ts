/**
 * E-mail address check: a syntactic test, no network look-up. An address is
 * accepted only when it is a plain ASCII `local@domain` that the SMTP
 * envelope and the message headers can carry unchanged:
 * - local part: a dot-atom of RFC 5322 (section 3.2.3), at most 64 octets
 *   (RFC 5321, section 4.5.3.1.1); quoted local parts are refused, since
 *   almost no real mailbox uses them and they are easy to get wrong;
 * - domain: at least two labels of letters, digits and inner hyphens, each
 *   at most 63 octets (RFC 1035, section 2.3.4), with a top-level label that
 *   is not all digits; address literals (`[192.0.2.1]`) are refused;
 * - the whole address at most 254 octets (RFC 5321 path limit, 256, less the
 *   angle brackets);
 * - nodemailer's own address parser reads it as exactly this one mailbox, so
 *   the headers say what the check saw.
 * Non-ASCII addresses would need the SMTPUTF8 extension, which this tool does
 * not use; they are refused with that reason.
 */
import addressparser from 'nodemailer/lib/addressparser';

export type AddressCheck =
  | { readonly valid: true; readonly address: string }
  | { readonly valid: false; readonly problem: string };

const ATEXT_ATOM = /^[A-Za-z0-9!#$%&'*+/=?^_`{|}~-]+$/;
const DOMAIN_LABEL = /^[A-Za-z0-9](?:[A-Za-z0-9-]{0,61}[A-Za-z0-9])?$/;
const MAX_ADDRESS_LENGTH = 254;
const MAX_LOCAL_LENGTH = 64;
const MAX_DOMAIN_LENGTH = 253;

function refuse(problem: string): AddressCheck {
  return { valid: false, problem };
}

/** Checks one address as written in accounts.csv or given with --from (surrounding blanks ignored). */
export function checkAddress(written: string): AddressCheck {
  const address = written.trim();
  if (address === '') return refuse('the address is empty');
  if (/[^\x20-\x7e]/.test(address)) {
    return refuse('the address holds a character outside printable ASCII (a non-ASCII address needs SMTPUTF8, which is not used; a control character or line break is never valid)');
  }
  if (address.length > MAX_ADDRESS_LENGTH) return refuse(`the address is ${address.length} characters long, more than the ${MAX_ADDRESS_LENGTH} SMTP allows`);
  const at = address.lastIndexOf('@');
  if (at < 0) return refuse('the address has no "@"');
  const local = address.slice(0, at);
  const domain = address.slice(at + 1);
  if (local === '') return refuse('the address has nothing before the "@"');
  if (local.length > MAX_LOCAL_LENGTH) return refuse(`the part before the "@" is ${local.length} characters long, more than the ${MAX_LOCAL_LENGTH} SMTP allows`);
  if (!local.split('.').every((atom) => ATEXT_ATOM.test(atom))) {
    return refuse('the part before the "@" is not a plain name (only letters, digits and !#$%&\'*+/=?^_`{|}~- in parts joined by single dots; no spaces, quotes, commas or angle brackets)');
  }
  if (domain === '') return refuse('the address has nothing after the "@"');
  if (domain.length > MAX_DOMAIN_LENGTH) return refuse(`the domain is ${domain.length} characters long, more than the ${MAX_DOMAIN_LENGTH} DNS allows`);
  const labels = domain.split('.');
  if (labels.length < 2) return refuse(`the domain "${domain}" has no dot; expected a full domain such as example.org`);
  if (!labels.every((label) => DOMAIN_LABEL.test(label))) {
    return refuse(`the domain "${domain}" is not a host name (labels of letters, digits and inner hyphens joined by single dots)`);
  }
  if (/^\d+$/.test(labels[labels.length - 1]!)) return refuse(`the domain "${domain}" ends in a number; an IP address is not accepted as a mail domain`);
  const parsed = addressparser(address, { flatten: true });
  if (parsed.length !== 1 || parsed[0]!.address !== address || parsed[0]!.name !== '') {
    return refuse('the mail library does not read the text as exactly this one address');
  }
  return { valid: true, address };
}

/** The domain part of an address that passed `checkAddress`. */
export function domainOf(address: string): string {
  return address.slice(address.lastIndexOf('@') + 1).toLowerCase();
}
