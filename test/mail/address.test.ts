/**
 * The address check: syntactic, no network. Valid examples are those of
 * RFC 3696 (Klensin, 2004, "Application Techniques for Checking and
 * Transformation of Names", section 3) that use no quoting (from memory of
 * that section); the limits are RFC 5321's (section 4.5.3.1: 64 octets for
 * the local part, 256 for a path including its angle brackets) and RFC
 * 1035's (section 2.3.4: 63 octets for a label).
 */
import { describe, expect, it } from 'vitest';
import { checkAddress } from '../../src/mail/address.ts';

function problemOf(text: string): string | null {
  const checked = checkAddress(text);
  return checked.valid ? null : checked.problem;
}

describe('checkAddress', () => {
  it.each([
    'user+mailbox@example.com',
    'customer/department=shipping@example.com',
    '$A12345@example.com',
    '!def!xyz%abc@example.com',
    '_somename@example.com',
    'first.last@sub.example.co.uk',
    'x@a-b.example',
  ])('accepts %s (RFC 3696, section 3, or plain forms)', (address) => {
    expect(checkAddress(address)).toEqual({ valid: true, address });
  });

  it('trims blanks around the cell', () => {
    expect(checkAddress('  ada@example.org \t')).toEqual({ valid: true, address: 'ada@example.org' });
  });

  it.each([
    ['', 'the address is empty'],
    ['ada.example.org', 'the address has no "@"'],
    ['@example.org', 'the address has nothing before the "@"'],
    ['ada@', 'the address has nothing after the "@"'],
    ['ada@localhost', 'the domain "localhost" has no dot; expected a full domain such as example.org'],
    ['ada@192.0.2.1', 'the domain "192.0.2.1" ends in a number; an IP address is not accepted as a mail domain'],
  ])('refuses %j: %s', (address, problem) => {
    expect(problemOf(address)).toBe(problem);
  });

  it.each([
    'a@b@example.org', // "@" in the local part needs quoting
    '"Abc@def"@example.com', // quoted local part: refused on purpose
    'Ada <ada@example.org>', // a display name is not an address
    'ada@example.org, eve@example.org', // two addresses
    'ada..lovelace@example.org', // empty atom
    '.ada@example.org',
    'ada.@example.org',
    'ada lovelace@example.org',
  ])('refuses the local part of %j', (address) => {
    expect(problemOf(address)).toMatch(/^the part before the "@" is not a plain name/);
  });

  it.each([
    'ada@-example.org',
    'ada@example-.org',
    'ada@exa_mple.org',
    'ada@example..org',
    'ada@[192.0.2.1]',
    'ada@example.org>',
  ])('refuses the domain of %j', (address) => {
    expect(problemOf(address)).toMatch(/^the domain ".*" is not a host name/);
  });

  it('refuses line breaks, control characters and non-ASCII (no SMTPUTF8)', () => {
    for (const address of ['ada@example.org\r\nBcc: eve@example.org', 'ada\u0000@example.org', 'jörg@example.org', 'ada@exämple.org']) {
      expect(problemOf(address)).toMatch(/^the address holds a character outside printable ASCII/);
    }
  });

  it('applies the length limits of RFC 5321 and RFC 1035', () => {
    expect(checkAddress(`${'a'.repeat(64)}@example.org`).valid).toBe(true);
    expect(problemOf(`${'a'.repeat(65)}@example.org`)).toBe('the part before the "@" is 65 characters long, more than the 64 SMTP allows');
    expect(checkAddress(`ada@${'b'.repeat(63)}.org`).valid).toBe(true);
    expect(problemOf(`ada@${'b'.repeat(64)}.org`)).toMatch(/is not a host name/);
    const longDomain = Array.from({ length: 5 }, () => 'c'.repeat(60)).join('.');
    expect(problemOf(`ada@${longDomain}`)).toBe('the address is 308 characters long, more than the 254 SMTP allows');
  });
});
