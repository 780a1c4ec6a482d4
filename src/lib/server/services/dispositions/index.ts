// QA dispositions of a lot: release, quarantine or reject with an electronic signature (21 CFR 11.50/11.70/11.200).
// A disposition is never edited; a correction is a new one that supersedes it. Releasing a lot that failed identity
// needs a second QA signature from a different person. When a disposition takes effect, in the same transaction, the
// lot status changes, the certificate is generated and stored, and the mail is written to the outbox.
// The public names of this service, one file per concern beside this index.
export { certificateContent, certificate, regenerate } from './certificate';
export type { StoredCertificate } from './certificate';
export { dispose, cosign } from './decide';
export { queueItems } from './queue';
export { get, forLot, awaitingSecond } from './read';
export type { DispositionView } from './read';
export type { RecordScan } from './record';
export { DECISIONS, MEANINGS, COSIGN_MEANINGS, DECISION_TEXT, dispositionSchema, cosignSchema } from './schema';
export type { Decision, DispositionState, DispositionInput } from './schema';
