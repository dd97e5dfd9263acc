/**
 * A minimal reader of DER (ITU-T X.690, Distinguished Encoding Rules) that
 * keeps every element's byte offsets, so that a signed part of a structure
 * can be hashed exactly as it was received (RFC 5652 section 5.4 signs the
 * original encoding of the signed attributes, not a re-encoding of them).
 *
 * Only what CMS signatures and X.509 certificates need: low tag numbers,
 * definite lengths. Anything else is refused with a DerError.
 */

/** One DER element: where it starts, where its content starts and where it ends. */
export interface DerElement {
  /** The identifier octet: class, constructed bit and tag number (e.g. 0x30 SEQUENCE). */
  readonly tag: number;
  /** Offset of the identifier octet in the buffer. */
  readonly start: number;
  /** Offset of the first content octet. */
  readonly contentStart: number;
  /** Offset just past the last content octet. */
  readonly end: number;
}

export const DER_TAG = {
  integer: 0x02,
  octetString: 0x04,
  objectIdentifier: 0x06,
  utcTime: 0x17,
  generalizedTime: 0x18,
  sequence: 0x30,
  set: 0x31,
  /** [0] IMPLICIT or EXPLICIT, constructed. */
  contextConstructed0: 0xa0,
  contextConstructed1: 0xa1,
} as const;

/** The input is not DER that this reader accepts. */
export class DerError extends Error {}

/** Reads the element that starts at `offset` and must end by `limit`. */
export function readElement(bytes: Uint8Array, offset: number, limit: number = bytes.length): DerElement {
  if (offset + 2 > limit) throw new DerError(`truncated DER element at offset ${offset}`);
  const tag = bytes[offset]!;
  if ((tag & 0x1f) === 0x1f) throw new DerError(`high tag numbers are not supported (offset ${offset})`);
  const firstLength = bytes[offset + 1]!;
  let length: number;
  let contentStart: number;
  if (firstLength < 0x80) {
    length = firstLength;
    contentStart = offset + 2;
  } else {
    const lengthOctets = firstLength & 0x7f;
    if (lengthOctets === 0) throw new DerError(`indefinite length is not DER (offset ${offset})`);
    if (lengthOctets > 4) throw new DerError(`length of ${lengthOctets} octets is too long (offset ${offset})`);
    if (offset + 2 + lengthOctets > limit) throw new DerError(`truncated DER length at offset ${offset}`);
    length = 0;
    for (let index = 0; index < lengthOctets; index += 1) length = length * 256 + bytes[offset + 2 + index]!;
    contentStart = offset + 2 + lengthOctets;
  }
  const end = contentStart + length;
  if (end > limit) throw new DerError(`DER element at offset ${offset} runs past its container`);
  return { tag, start: offset, contentStart, end };
}

/** The elements directly inside a constructed element, in order. */
export function childrenOf(bytes: Uint8Array, parent: DerElement): DerElement[] {
  const children: DerElement[] = [];
  let offset = parent.contentStart;
  while (offset < parent.end) {
    const child = readElement(bytes, offset, parent.end);
    children.push(child);
    offset = child.end;
  }
  return children;
}

/** The element with its identifier and length octets (its full encoding). */
export function encodingOf(bytes: Uint8Array, element: DerElement): Uint8Array {
  return bytes.subarray(element.start, element.end);
}

/** The element's content octets. */
export function contentOf(bytes: Uint8Array, element: DerElement): Uint8Array {
  return bytes.subarray(element.contentStart, element.end);
}

/** Dotted form of an OBJECT IDENTIFIER element (X.690 section 8.19), e.g. `1.2.840.113549.1.7.2`. */
export function objectIdentifierOf(bytes: Uint8Array, element: DerElement): string {
  if (element.tag !== DER_TAG.objectIdentifier) throw new DerError(`expected an OBJECT IDENTIFIER at offset ${element.start}`);
  const content = contentOf(bytes, element);
  const arcs: number[] = [];
  let value = 0;
  for (const octet of content) {
    value = value * 128 + (octet & 0x7f);
    if ((octet & 0x80) === 0) {
      if (arcs.length === 0) {
        const first = value < 80 ? Math.floor(value / 40) : 2;
        arcs.push(first, value - first * 40);
      } else {
        arcs.push(value);
      }
      value = 0;
    }
  }
  return arcs.join('.');
}

/** Byte-wise equality of two encodings. */
export function sameBytes(left: Uint8Array, right: Uint8Array): boolean {
  return left.length === right.length && left.every((octet, index) => octet === right[index]);
}
