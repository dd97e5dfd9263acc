/**
 * The signer's identity: opening the firm's PKCS#12 file (RFC 7292), and
 * making a self-signed test certificate for the demo and the tests.
 *
 * The passphrase and the private key stay in memory: no message, error,
 * `cause` or file ever carries them.
 */
import { X509Certificate, createPrivateKey, generateKeyPair, randomBytes, type KeyObject } from 'node:crypto';
import { writeFile } from 'node:fs/promises';
import { promisify } from 'node:util';
import forge from 'node-forge';
import { ArchiveError, sha256Hex } from './layout.ts';

/** What signing needs from the PKCS#12 file. */
export interface SigningIdentity {
  /** The signer's certificate, PEM (public: it goes into the archive as signer.pem). */
  readonly certificatePem: string;
  /** SHA-256 of the certificate's DER, lower-case hex: the fingerprint the manifest records. */
  readonly certificateSha256: string;
  /** The certificate's common name (else its whole subject), shown as the PDF signer name. */
  readonly signerName: string;
  readonly notBefore: Date;
  readonly notAfter: Date;
  /** The private key, for the manifest's detached signature (never exported). */
  readonly privateKey: KeyObject;
}

type ForgeCertificate = forge.pki.Certificate;
type ForgeRsaPrivateKey = forge.pki.rsa.PrivateKey;

function isRsaPrivateKey(key: unknown): key is ForgeRsaPrivateKey {
  return typeof key === 'object' && key !== null && 'n' in key && 'e' in key && 'd' in key;
}

function matchesKey(certificate: ForgeCertificate, key: ForgeRsaPrivateKey): boolean {
  const publicKey = certificate.publicKey as forge.pki.rsa.PublicKey;
  return 'n' in publicKey && publicKey.n.compareTo(key.n) === 0 && publicKey.e.compareTo(key.e) === 0;
}

/**
 * Opens a PKCS#12 file with its passphrase and returns the signing
 * certificate (the one whose public key matches the private key) and key.
 * Refuses, without repeating the passphrase, a file that is not PKCS#12, a
 * passphrase that does not open it, a key that is not RSA (the PDF signer
 * supports RSA only), and a certificate not valid at `now`.
 */
export function openSigningIdentity(p12: Uint8Array, passphrase: string, source: string, now: Date): SigningIdentity {
  let container: forge.pkcs12.Pkcs12Pfx;
  try {
    const asn1 = forge.asn1.fromDer(forge.util.createBuffer(Buffer.from(p12).toString('binary')));
    container = forge.pkcs12.pkcs12FromAsn1(asn1, false, passphrase);
  } catch (error) {
    const wrongPassphrase = error instanceof Error && /MAC could not be verified|Invalid password|decrypt/i.test(error.message);
    throw new ArchiveError('certificate', wrongPassphrase
      ? `cannot open the certificate ${source}: the passphrase does not open it; check the environment variable named by --passphrase-env`
      : `cannot open the certificate ${source}: it is not a PKCS#12 (.p12/.pfx) file`);
  }
  const keyBags = [
    ...(container.getBags({ bagType: forge.pki.oids['pkcs8ShroudedKeyBag']! })[forge.pki.oids['pkcs8ShroudedKeyBag']!] ?? []),
    ...(container.getBags({ bagType: forge.pki.oids['keyBag']! })[forge.pki.oids['keyBag']!] ?? []),
  ];
  const key = keyBags[0]?.key;
  if (!key) throw new ArchiveError('certificate', `the certificate ${source} holds no private key; export it with its key`);
  if (!isRsaPrivateKey(key)) throw new ArchiveError('certificate', `the certificate ${source} holds a key that is not RSA; PDF signing here supports RSA keys only`);
  const certificates = (container.getBags({ bagType: forge.pki.oids['certBag']! })[forge.pki.oids['certBag']!] ?? [])
    .map((bag) => bag.cert)
    .filter((certificate): certificate is ForgeCertificate => certificate !== undefined);
  const certificate = certificates.find((candidate) => matchesKey(candidate, key));
  if (!certificate) throw new ArchiveError('certificate', `the certificate ${source} has no certificate for its private key`);

  const certificatePem = forge.pki.certificateToPem(certificate).replace(/\r\n/g, '\n');
  const x509 = new X509Certificate(certificatePem);
  const notBefore = new Date(x509.validFrom);
  const notAfter = new Date(x509.validTo);
  if (now < notBefore || now > notAfter) {
    throw new ArchiveError('certificate', `the certificate ${source} is valid from ${notBefore.toISOString()} to ${notAfter.toISOString()}, not at the signing time ${now.toISOString()}; renew it`);
  }
  const commonName = certificate.subject.getField('CN') as { value?: unknown } | null;
  const signerName = typeof commonName?.value === 'string' ? commonName.value : x509.subject.replace(/\n/g, ', ');
  const privateKey = createPrivateKey(forge.pki.privateKeyToPem(key));
  return { certificatePem, certificateSha256: sha256Hex(x509.raw), signerName, notBefore, notAfter, privateKey };
}

const generateRsaKeyPair = promisify(generateKeyPair);

/**
 * A self-signed RSA 2048 / SHA-256 certificate for `name` in a PKCS#12
 * container encrypted with `passphrase` (AES-256, as OpenSSL 3 writes by
 * default), valid from a day before `notBefore` (default now) for two years.
 * For the demo and the tests only: a firm signs with a certificate from its
 * certificate authority. The key pair comes from node:crypto (fast, native);
 * node-forge builds the certificate and the container.
 */
export async function createTestCertificate(options: { readonly name: string; readonly passphrase: string; readonly notBefore?: Date }): Promise<Uint8Array> {
  const { publicKey, privateKey } = await generateRsaKeyPair('rsa', { modulusLength: 2048 });
  const forgeKey = forge.pki.privateKeyFromPem(privateKey.export({ type: 'pkcs1', format: 'pem' }).toString());
  const certificate = forge.pki.createCertificate();
  certificate.publicKey = forge.pki.publicKeyFromPem(publicKey.export({ type: 'spki', format: 'pem' }).toString());
  const serial = randomBytes(16);
  serial[0] = serial[0]! & 0x7f; // a positive INTEGER (RFC 5280 4.1.2.2)
  certificate.serialNumber = serial.toString('hex');
  const start = options.notBefore ?? new Date();
  certificate.validity.notBefore = new Date(start.getTime() - 86_400_000);
  certificate.validity.notAfter = new Date(start.getTime() + 2 * 365 * 86_400_000);
  const subject = [{ name: 'commonName', value: options.name }];
  certificate.setSubject(subject);
  certificate.setIssuer(subject);
  certificate.setExtensions([
    { name: 'basicConstraints', cA: false },
    { name: 'keyUsage', digitalSignature: true, nonRepudiation: true },
    { name: 'subjectKeyIdentifier' },
  ]);
  certificate.sign(forgeKey, forge.md.sha256.create());
  const container = forge.pkcs12.toPkcs12Asn1(forgeKey, [certificate], options.passphrase, { algorithm: 'aes256', friendlyName: options.name });
  return Uint8Array.from(Buffer.from(forge.asn1.toDer(container).getBytes(), 'binary'));
}

/**
 * `keygen`: writes a test certificate to `out` (never over an existing file),
 * readable by its owner only.
 */
export async function writeTestCertificate(options: { readonly out: string; readonly name: string; readonly passphrase: string }): Promise<void> {
  const p12 = await createTestCertificate({ name: options.name, passphrase: options.passphrase });
  try {
    await writeFile(options.out, p12, { flag: 'wx', mode: 0o600 });
  } catch (error) {
    if (error instanceof Error && 'code' in error && error.code === 'EEXIST') {
      throw new ArchiveError('certificate', `${options.out} exists already; keygen never overwrites a certificate: choose another --out`);
    }
    throw error;
  }
}
