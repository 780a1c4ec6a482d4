// `npm run audit:verify`: recomputes the audit chain (HMAC keyed by LOTGATE_AUDIT_KEY) end to end, reports every broken
// row and the counts, and compares the chain with the latest signed checkpoint, so a deleted tail or an emptied table
// fails too. Honours DATABASE_URL. Exit 0 only when everything holds; 1 otherwise.
import { resolveDatabase } from './lib/runtime';

const { url } = await resolveDatabase();
process.env.DATABASE_URL = url;
const { closeDatabase } = await import('../src/lib/server/db/index');
const { verifyChain } = await import('../src/lib/server/services/audit');
const { readCheckpoints, checkpointFile } = await import('../src/lib/server/audit-checkpoint');

const { valid, invalid } = readCheckpoints();
const latest = valid.length ? valid.reduce((a, b) => (b.seq > a.seq || (b.seq === a.seq && b.at > a.at) ? b : a)) : null;
let report;
try {
	report = await verifyChain({ checkpoint: latest });
} finally {
	await closeDatabase();
}

const problems: string[] = [];
for (const row of report.broken) console.error(`  BROKEN event #${row.id}: ${row.reason}`);
if (report.brokenCount > report.broken.length) console.error(`  … and ${report.brokenCount - report.broken.length} more`);
if (report.brokenCount) problems.push(`${report.brokenCount} of ${report.checked} events fail the chain`);
for (const line of invalid) problems.push(`checkpoint file line ${line.line}: ${line.why}`);
if (report.checkpoint && !report.checkpoint.ok) problems.push(`checkpoint of ${report.checkpoint.at}: ${report.checkpoint.reason}`);

const headText = report.head ? `head #${report.head.seq} ${report.head.hash}` : 'no events';
if (!latest) console.warn(`no checkpoint found in ${checkpointFile()}: a deleted tail or an emptied table cannot be detected until one is written (npm run audit:checkpoint)`);
if (problems.length) {
	console.error(`audit chain BROKEN: ${problems.join('; ')} (${report.checked} events read, ${report.checked - report.brokenCount} verified, ${headText})`);
	process.exit(1);
}
console.log(
	`audit chain verified: ${report.checked} events, no break, ${headText}` +
		(latest ? `; matches the checkpoint of ${latest.at} (#${latest.seq})` : '') +
		(report.legacyUntil ? `; events up to #${report.legacyUntil} predate the audit key (plain SHA-256)` : '')
);
