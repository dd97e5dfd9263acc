/**
 * PDF digital signatures (ISO 32000-1 section 12.8): one signature field per
 * statement, SubFilter `adbe.pkcs7.detached`, whose /ByteRange covers the
 * whole file except the /Contents hole that holds the CMS signature.
 *
 * Signing uses @signpdf (placeholder made with pdf-lib, CMS made from the
 * PKCS#12 file); checking is independent of it (cms.ts, node:crypto).
 */
import { PDFDocument } from 'pdf-lib';
import { pdflibAddPlaceholder } from '@signpdf/placeholder-pdf-lib';
import { P12Signer } from '@signpdf/signer-p12';
import { SignPdf } from '@signpdf/signpdf';
import { verifyDetachedCms } from './cms.ts';
import { SIGNATURE_REASON } from './layout.ts';

/** What the signature dictionary says about the signer. */
export interface PdfSignatureDetails {
  readonly signerName: string;
  readonly signingTime: Date;
  /** Written as the signing application (/Prop_Build /App /Name), e.g. `quarterline 0.1.0`. */
  readonly application: string;
}

const BYTE_RANGE_KEY = '/ByteRange';

/** Whether the PDF already has a signature dictionary. */
function hasSignature(pdf: Uint8Array): boolean {
  return Buffer.from(pdf.buffer, pdf.byteOffset, pdf.byteLength).includes(BYTE_RANGE_KEY, 0, 'latin1');
}

/**
 * Signs one PDF: adds a signature field (reason "Quarterly statement",
 * signer name, signing time) and fills it with a detached CMS signature made
 * with the PKCS#12 file. The document is rewritten by pdf-lib without
 * object streams (the signature dictionary must be a plain object) and its
 * metadata is left as printed. A P12Signer signs once only, so each PDF gets
 * its own.
 */
export async function signPdf(unsigned: Uint8Array, p12: Uint8Array, passphrase: string, details: PdfSignatureDetails): Promise<Uint8Array> {
  if (hasSignature(unsigned)) throw new Error('the PDF is already signed');
  const document = await PDFDocument.load(unsigned, { updateMetadata: false });
  pdflibAddPlaceholder({
    pdfDoc: document,
    reason: SIGNATURE_REASON,
    contactInfo: '',
    name: details.signerName,
    location: '',
    signingTime: details.signingTime,
    appName: details.application,
  });
  const withPlaceholder = Buffer.from(await document.save({ useObjectStreams: false }));
  const signer = new P12Signer(Buffer.from(p12), { passphrase });
  const signed = await new SignPdf().sign(withPlaceholder, signer, details.signingTime);
  return Uint8Array.from(signed);
}

export type PdfSignatureCheck =
  | { readonly valid: true; readonly signerCertificateDer: Uint8Array; readonly signingTime: Date | null }
  | { readonly valid: false; readonly problem: string };

const HEX_DIGIT = /^[0-9A-Fa-f]$/;

/**
 * Checks the PDF's one signature: the /ByteRange is `[0 a b c]` with
 * b + c = file length (it covers everything but the hole [a, b)), the hole
 * is exactly the hexadecimal string that follows `/Contents`, and the CMS
 * signature in it verifies over the covered bytes.
 */
export function checkPdfSignature(pdf: Uint8Array): PdfSignatureCheck {
  const text = Buffer.from(pdf.buffer, pdf.byteOffset, pdf.byteLength).toString('latin1');
  const keyAt = text.indexOf(BYTE_RANGE_KEY);
  if (keyAt < 0) return { valid: false, problem: 'the PDF has no signature' };
  if (text.indexOf(BYTE_RANGE_KEY, keyAt + 1) >= 0) return { valid: false, problem: 'the PDF has more than one signature (added after filing?)' };
  const match = /^\/ByteRange\s*\[\s*(\d+)\s+(\d+)\s+(\d+)\s+(\d+)\s*\]/.exec(text.slice(keyAt, keyAt + 120));
  if (!match) return { valid: false, problem: 'the signature\'s /ByteRange cannot be read' };
  const [first, holeStart, holeEnd, lastLength] = match.slice(1, 5).map(Number) as [number, number, number, number];
  if (first !== 0 || holeStart <= 0 || holeEnd <= holeStart || holeEnd + lastLength !== pdf.length) {
    return { valid: false, problem: `the signature does not cover the whole file (/ByteRange [${first} ${holeStart} ${holeEnd} ${lastLength}], file length ${pdf.length})` };
  }
  const hole = text.slice(holeStart, holeEnd);
  const hexDigits = hole.slice(1, -1);
  if (!hole.startsWith('<') || !hole.endsWith('>') || hexDigits.length % 2 !== 0 || ![...hexDigits].every((digit) => HEX_DIGIT.test(digit))) {
    return { valid: false, problem: 'the signature hole is not a hexadecimal string' };
  }
  if (!/\/Contents\s*$/.test(text.slice(Math.max(0, holeStart - 40), holeStart))) {
    return { valid: false, problem: 'the signature hole is not the /Contents of the signature' };
  }
  const signedBytes = Buffer.concat([pdf.subarray(0, holeStart), pdf.subarray(holeEnd)]);
  const check = verifyDetachedCms(signedBytes, Buffer.from(hexDigits, 'hex'));
  return check.valid ? check : { valid: false, problem: check.problem };
}
