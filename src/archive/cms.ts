/**
 * Verification of a detached CMS signature (RFC 5652, Cryptographic Message
 * Syntax, SignedData), the kind a PDF signature with SubFilter
 * `adbe.pkcs7.detached` carries (ISO 32000-1 section 12.8.3.3).
 *
 * What is checked, in RFC 5652 terms: one SignerInfo; the content type is
 * id-data and no content is encapsulated (detached); the `message-digest`
 * signed attribute equals the digest of the signed bytes (section 11.2); the
 * signature verifies over the DER of the signed attributes with the EXPLICIT
 * SET OF tag (section 5.4) under the public key of the certificate that the
 * SignerInfo names by issuer and serial number (section 5.3).
 */
import { X509Certificate, createHash, verify as verifySignature } from 'node:crypto';
import { DER_TAG, DerError, childrenOf, contentOf, encodingOf, objectIdentifierOf, readElement, sameBytes, type DerElement } from './der.ts';

const OID = {
  signedData: '1.2.840.113549.1.7.2',
  data: '1.2.840.113549.1.7.1',
  contentType: '1.2.840.113549.1.9.3',
  messageDigest: '1.2.840.113549.1.9.4',
  signingTime: '1.2.840.113549.1.9.5',
} as const;

/** Digest algorithms accepted, by OID (NIST FIPS 180-4); SHA-1 and MD5 are refused as broken. */
const DIGEST_BY_OID: Readonly<Record<string, string>> = {
  '2.16.840.1.101.3.4.2.1': 'sha256',
  '2.16.840.1.101.3.4.2.2': 'sha384',
  '2.16.840.1.101.3.4.2.3': 'sha512',
};

/** Signature algorithms accepted: RSA PKCS#1 v1.5 (RFC 8017) and ECDSA (RFC 5758). */
const SIGNATURE_ALGORITHMS: ReadonlySet<string> = new Set([
  '1.2.840.113549.1.1.1', // rsaEncryption
  '1.2.840.113549.1.1.11', // sha256WithRSAEncryption
  '1.2.840.113549.1.1.12', // sha384WithRSAEncryption
  '1.2.840.113549.1.1.13', // sha512WithRSAEncryption
  '1.2.840.10045.4.3.2', // ecdsa-with-SHA256
  '1.2.840.10045.4.3.3', // ecdsa-with-SHA384
  '1.2.840.10045.4.3.4', // ecdsa-with-SHA512
]);

export type CmsCheck =
  | { readonly valid: true; readonly signerCertificateDer: Uint8Array; readonly signingTime: Date | null }
  | { readonly valid: false; readonly problem: string };

class CmsProblem extends Error {}

function expectTag(element: DerElement | undefined, tag: number, what: string): DerElement {
  if (!element || element.tag !== tag) throw new CmsProblem(`malformed CMS: expected ${what}`);
  return element;
}

/** UTCTime (YYMMDDHHMMSSZ, years 1950–2049 per RFC 5280 4.1.2.5.1) or GeneralizedTime (YYYYMMDDHHMMSSZ). */
function timeOf(bytes: Uint8Array, element: DerElement): Date | null {
  const text = Buffer.from(contentOf(bytes, element)).toString('latin1');
  const match = element.tag === DER_TAG.utcTime
    ? /^(\d{2})(\d{2})(\d{2})(\d{2})(\d{2})(\d{2})Z$/.exec(text)
    : /^(\d{4})(\d{2})(\d{2})(\d{2})(\d{2})(\d{2})Z$/.exec(text);
  if (!match) return null;
  const [, yearText, month, day, hour, minute, second] = match;
  let year = Number(yearText);
  if (element.tag === DER_TAG.utcTime) year += year < 50 ? 2000 : 1900;
  return new Date(Date.UTC(year, Number(month) - 1, Number(day), Number(hour), Number(minute), Number(second)));
}

/** Issuer name and serial number of a certificate, as DER encodings (RFC 5280 section 4.1). */
function issuerAndSerialOf(certificateDer: Uint8Array): { readonly issuer: Uint8Array; readonly serial: Uint8Array } {
  const certificate = readElement(certificateDer, 0);
  const tbs = expectTag(childrenOf(certificateDer, certificate)[0], DER_TAG.sequence, 'tbsCertificate');
  const fields = childrenOf(certificateDer, tbs);
  const skip = fields[0]?.tag === DER_TAG.contextConstructed0 ? 1 : 0; // explicit version
  const serial = expectTag(fields[skip], DER_TAG.integer, 'certificate serial number');
  const issuer = expectTag(fields[skip + 2], DER_TAG.sequence, 'certificate issuer');
  return { issuer: encodingOf(certificateDer, issuer), serial: encodingOf(certificateDer, serial) };
}

function attributesOf(bytes: Uint8Array, signedAttributes: DerElement): Map<string, DerElement[]> {
  const byType = new Map<string, DerElement[]>();
  for (const attribute of childrenOf(bytes, signedAttributes)) {
    const [type, values] = childrenOf(bytes, expectTag(attribute, DER_TAG.sequence, 'an attribute'));
    const oid = objectIdentifierOf(bytes, expectTag(type, DER_TAG.objectIdentifier, 'an attribute type'));
    if (byType.has(oid)) throw new CmsProblem(`signed attribute ${oid} appears twice`);
    byType.set(oid, childrenOf(bytes, expectTag(values, DER_TAG.set, 'attribute values')));
  }
  return byType;
}

function checkDetachedCms(signedContent: Uint8Array, cms: Uint8Array): CmsCheck {
  const contentInfo = expectTag(readElement(cms, 0), DER_TAG.sequence, 'ContentInfo');
  if (cms.subarray(contentInfo.end).some((octet) => octet !== 0)) throw new CmsProblem('bytes other than zero padding follow the CMS signature');
  const [contentType, explicitContent] = childrenOf(cms, contentInfo);
  if (objectIdentifierOf(cms, expectTag(contentType, DER_TAG.objectIdentifier, 'content type')) !== OID.signedData) {
    throw new CmsProblem('the CMS content is not SignedData');
  }
  const signedData = expectTag(childrenOf(cms, expectTag(explicitContent, DER_TAG.contextConstructed0, 'SignedData'))[0], DER_TAG.sequence, 'SignedData');
  const parts = childrenOf(cms, signedData);
  const encapsulated = expectTag(parts[2], DER_TAG.sequence, 'EncapsulatedContentInfo');
  const encapsulatedParts = childrenOf(cms, encapsulated);
  if (objectIdentifierOf(cms, expectTag(encapsulatedParts[0], DER_TAG.objectIdentifier, 'eContentType')) !== OID.data || encapsulatedParts.length !== 1) {
    throw new CmsProblem('the signature is not detached id-data');
  }
  const certificateSet = parts.find((part) => part.tag === DER_TAG.contextConstructed0);
  const certificates = certificateSet ? childrenOf(cms, certificateSet).map((element) => encodingOf(cms, element)) : [];
  const signerInfos = expectTag(parts[parts.length - 1], DER_TAG.set, 'SignerInfos');
  const signers = childrenOf(cms, signerInfos);
  if (signers.length !== 1) throw new CmsProblem(`expected exactly one signer, found ${signers.length}`);

  const signerFields = childrenOf(cms, expectTag(signers[0], DER_TAG.sequence, 'SignerInfo'));
  const [, signerId, digestAlgorithm, signedAttributes, signatureAlgorithm, signatureValue] = signerFields;
  const sid = childrenOf(cms, expectTag(signerId, DER_TAG.sequence, 'IssuerAndSerialNumber'));
  const sidIssuer = encodingOf(cms, expectTag(sid[0], DER_TAG.sequence, 'signer issuer'));
  const sidSerial = encodingOf(cms, expectTag(sid[1], DER_TAG.integer, 'signer serial number'));
  const digestOid = objectIdentifierOf(cms, childrenOf(cms, expectTag(digestAlgorithm, DER_TAG.sequence, 'digest algorithm'))[0]!);
  const digestName = DIGEST_BY_OID[digestOid];
  if (!digestName) throw new CmsProblem(`unsupported digest algorithm ${digestOid}`);
  const attributes = expectTag(signedAttributes, DER_TAG.contextConstructed0, 'signed attributes');
  const signatureOid = objectIdentifierOf(cms, childrenOf(cms, expectTag(signatureAlgorithm, DER_TAG.sequence, 'signature algorithm'))[0]!);
  if (!SIGNATURE_ALGORITHMS.has(signatureOid)) throw new CmsProblem(`unsupported signature algorithm ${signatureOid}`);
  const signature = contentOf(cms, expectTag(signatureValue, DER_TAG.octetString, 'signature value'));

  const attributeValues = attributesOf(cms, attributes);
  const declaredType = attributeValues.get(OID.contentType)?.[0];
  if (!declaredType || objectIdentifierOf(cms, declaredType) !== OID.data) throw new CmsProblem('the content-type signed attribute is missing or not id-data');
  const declaredDigest = attributeValues.get(OID.messageDigest)?.[0];
  if (!declaredDigest || declaredDigest.tag !== DER_TAG.octetString) throw new CmsProblem('the message-digest signed attribute is missing');
  const actualDigest = createHash(digestName).update(signedContent).digest();
  if (!sameBytes(contentOf(cms, declaredDigest), actualDigest)) {
    return { valid: false, problem: 'the signed bytes were changed after signing (digest mismatch)' };
  }

  const signerCertificateDer = certificates.find((der) => {
    const named = issuerAndSerialOf(der);
    return sameBytes(named.issuer, sidIssuer) && sameBytes(named.serial, sidSerial);
  });
  if (!signerCertificateDer) throw new CmsProblem('the signer\'s certificate is not in the signature');
  // RFC 5652 section 5.4: the signature covers the DER of the attributes with the SET OF tag, not [0].
  const signedAttributesDer = Uint8Array.from(encodingOf(cms, attributes));
  signedAttributesDer[0] = DER_TAG.set;
  const publicKey = new X509Certificate(signerCertificateDer).publicKey;
  if (!verifySignature(digestName, signedAttributesDer, publicKey, signature)) {
    return { valid: false, problem: 'the CMS signature does not verify with the signer\'s certificate' };
  }
  const timeElement = attributeValues.get(OID.signingTime)?.[0];
  return { valid: true, signerCertificateDer, signingTime: timeElement ? timeOf(cms, timeElement) : null };
}

/**
 * Checks a detached CMS SignedData over `signedContent`; never throws for a
 * malformed signature, which is reported as a problem instead.
 */
export function verifyDetachedCms(signedContent: Uint8Array, cms: Uint8Array): CmsCheck {
  try {
    return checkDetachedCms(signedContent, cms);
  } catch (error) {
    if (error instanceof CmsProblem || error instanceof DerError) return { valid: false, problem: error.message };
    return { valid: false, problem: `the signature cannot be read (${error instanceof Error ? error.message : String(error)})` };
  }
}
