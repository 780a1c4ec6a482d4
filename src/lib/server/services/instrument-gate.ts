// The instrument-qualification gate, called by the scan workflow (./scans.ts) with one line: a scan from an
// instrument whose performance check is overdue or failed is stored but gets `unusable`, with the reason. A scan
// that names no instrument keeps today's behaviour.
import type { Transaction } from 'sequelize';
import * as checks from './instrument-checks';

/** Why the instrument may not produce a material verdict now, or null. */
export async function screeningBlock(tx: Transaction, instrumentId: number | null | undefined, now = new Date()): Promise<string | null> {
	if (instrumentId == null) return null;
	const s = await checks.status(instrumentId, tx, now);
	return s.reason;
}
