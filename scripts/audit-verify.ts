// Checks the audit chain end to end; exits 1 and names the first broken row.
import { resolveDatabase } from './lib/runtime';

const { url } = await resolveDatabase();
process.env.DATABASE_URL = url;
const { closeDatabase } = await import('../src/lib/server/db/index');
const { verifyChain } = await import('../src/lib/server/services/audit');
const report = await verifyChain();
await closeDatabase();
if (report.ok) {
	console.log(`audit chain verified: ${report.checked} events, no break`);
} else {
	console.error(`audit chain BROKEN at event #${report.firstBroken!.id}: ${report.firstBroken!.reason} (${report.checked} events before it verified)`);
	process.exit(1);
}
