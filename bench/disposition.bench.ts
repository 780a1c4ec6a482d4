// Disposition benchmark (issue 7), against the embedded PostgreSQL in database lotgate_bench_disposition, on a
// 50-container lot (2,000-point spectra, some containers failing): the first QA signature; the second signature, which
// also renders and stores the certificate and writes the outbox; regenerating the certificate; and sending the mail
// with the PDF through the local SMTP fake. `npx tsx bench/disposition.bench.ts`.
import { freshBenchDatabase, reportMs as line } from './support';

const CONTAINERS = 50;
const POINTS = 2000;

async function main() {
	const { url, sequelize, closeDatabase } = await freshBenchDatabase('lotgate_bench_disposition');
	const { approvedMaterial, jcamp } = await import('../tests/support/lot-fixtures');
	const lots = await import('../src/lib/server/services/lots');
	const scans = await import('../src/lib/server/services/scans');
	const users = await import('../src/lib/server/services/users');
	const dispositions = await import('../src/lib/server/services/dispositions');
	const mail = await import('../src/lib/server/mail');
	const { startSmtpFake } = await import('../src/lib/server/mail-fake');
	const { rootActor } = await import('../tests/support/factories');

	const fx = await approvedMaterial({ points: POINTS });
	await sequelize().query("UPDATE materials SET recipients = '{qa-release@bench.test}' WHERE id = :id", { replacements: { id: fx.materialId } });
	const person = async (email: string, roles: ('technician' | 'qa')[]) => {
		const u = await users.create(rootActor, { email, name: `Bench ${email.split('@')[0]}`, password: 'bench-password-1', roles });
		return { id: u.id, label: u.name, roles };
	};
	const tech = await person('bench-tech@bench.test', ['technician']);
	const qa1 = await person('bench-qa1@bench.test', ['qa']);
	const qa2 = await person('bench-qa2@bench.test', ['qa']);
	const lot = await lots.create(tech, { material: fx.materialCode, supplier: fx.supplierCode, supplierLot: 'BENCH-DISP-50', containers: CONTAINERS, receivedAt: new Date().toISOString().slice(0, 10) });
	for (let i = 0; i < CONTAINERS; i++) {
		await scans.add(tech, lot.id, { fileName: `C${i + 1}.jdx`, bytes: jcamp(i % 10 === 3 ? 'diluted-starch' : 'genuine', fx.axis, 70_000 + i, `bench C${i + 1}`), container: i + 1 });
	}
	const view = await lots.get(lot.id);
	console.log(`setup: ${CONTAINERS} scans, identity ${view.identity} (not timed)`);

	const sig = { password: 'bench-password-1', meaning: 'released for use', reason: 'bench: re-tested and within specification' };
	let t = performance.now();
	const first = await dispositions.dispose(qa1, lot.id, { decision: 'release', ...sig });
	line('first signature (release of a failed lot, waits for the second)', performance.now() - t, 500);
	t = performance.now();
	const second = await dispositions.cosign(qa2, first.disposition.id, { ...sig, meaning: 'approved as second QA manager' });
	line('second signature: status, certificate (PDF) stored, outbox written', performance.now() - t, 1500);
	const cert = await dispositions.certificate(lot.id);
	console.log(`  certificate ${(cert.pdf.length / 1024).toFixed(1)} kB, ${cert.content.containers.length} container rows; disposition ${second.disposition.state}`);
	const samples: number[] = [];
	for (let i = 0; i < 5; i++) {
		t = performance.now();
		const again = await dispositions.regenerate(cert.dispositionId);
		samples.push(performance.now() - t);
		if (!again.matchesStored) throw new Error('the regenerated certificate differs from the stored one');
	}
	samples.sort((a, b) => a - b);
	line('certificate regenerated from the database, byte-identical (median of 5)', samples[2], 800);

	const fake = await startSmtpFake({ databaseUrl: url });
	process.env.SMTP_URL = fake.url;
	const outbox = (await mail.forLot(lot.id)).find((m) => m.kind === 'certificate')!;
	t = performance.now();
	const sent = await mail.deliver(outbox.id);
	line(`mail with the PDF sent through the SMTP fake (${sent.state})`, performance.now() - t, 1000);
	await fake.close();
	await closeDatabase();
}

main().catch((error) => {
	console.error(error);
	process.exit(1);
});
