/**
 * Signing and the archive (docs/archive.md): `signRun` signs a run's
 * reported statements and files them write-once; `verifyArchive` checks every
 * file, signature, manifest and chain link; `createTestCertificate` makes a
 * self-signed PKCS#12 for the demo and the tests.
 */
export { signRun, type SignOptions, type SignResult } from './sign.ts';
export { verifyArchive, type ArchiveProblem, type VerifyOptions, type VerifyReport } from './verify.ts';
export { createTestCertificate, writeTestCertificate } from './certificate.ts';
export { signSummary, verifySummary } from './summary.ts';
export { ArchiveError, type ArchiveRefusal } from './layout.ts';
