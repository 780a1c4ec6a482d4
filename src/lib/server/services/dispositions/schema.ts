// Dispositions: decisions, suggested meanings and the signing schemas.
import { z } from 'zod';
import * as lots from '../lots';
import * as signatures from '../signatures';

export type Decision = 'release' | 'quarantine' | 'reject';

export const DECISIONS: Decision[] = ['release', 'quarantine', 'reject'];

export type DispositionState = 'awaiting-second-signature' | 'effective' | 'superseded';

/** Suggested meanings per decision; the signer may word their own. */
export const MEANINGS: Record<Decision, string[]> = {
	release: ['released for use'],
	quarantine: ['quarantined pending investigation', 'held in quarantine'],
	reject: ['rejected', 'rejected and returned to the supplier']
};

export const COSIGN_MEANINGS = ['second signature: released for use despite the failed identity', 'approved as second QA manager'];

export const DECISION_TEXT: Record<Decision, string> = { release: 'released', quarantine: 'quarantined', reject: 'rejected' };

export const LOT_STATUS: Record<Decision, lots.LotStatus> = { release: 'released', quarantine: 'quarantined', reject: 'rejected' };

export const dispositionSchema = signatures.signatureFieldsSchema.extend({
	decision: z.enum(['release', 'quarantine', 'reject'], { errorMap: () => ({ message: 'Choose release, quarantine or reject' }) })
});

export type DispositionInput = z.input<typeof dispositionSchema>;

export const cosignSchema = signatures.signatureFieldsSchema;
