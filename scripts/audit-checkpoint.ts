// `npm run audit:checkpoint`: writes a signed checkpoint of the audit chain's head now (file + archive mail).
import { resolveDatabase } from './lib/runtime';

const { url } = await resolveDatabase();
process.env.DATABASE_URL = url;
const { closeDatabase } = await import('../src/lib/server/db/index');
const { writeCheckpoint, checkpointFile } = await import('../src/lib/server/audit-checkpoint');
try {
	const cp = (await writeCheckpoint({ reason: 'on demand', force: true }))!;
	console.log(`audit checkpoint written to ${checkpointFile()}: event #${cp.seq}, head ${cp.head}, ${cp.at}`);
} finally {
	await closeDatabase();
}
