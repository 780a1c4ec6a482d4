// Scale-out on one PostgreSQL (issue 16 §5): two web processes (`node build`, no job workers in them) and two job
// workers (`npm run worker`) against the test database. 200 container scans are uploaded over HTTP, spread over both
// web processes, while a model build started on one web process is watched from the other.
import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { QueryTypes } from 'sequelize';
import { afterAll, beforeAll, describe, expect, inject, it } from 'vitest';
import { sequelize } from '../../src/lib/server/db';
import { startSmtpFake, type SmtpFake } from '../../src/lib/server/mail-fake';
import * as audit from '../../src/lib/server/services/audit';
import * as lots from '../../src/lib/server/services/lots';
import * as materials from '../../src/lib/server/services/materials';
import { makeUser, rootActor, unique } from '../support/factories';
import { sessionCookie } from '../support/http';
import { insertLibrary, standardRows } from '../support/library-fixtures';
import { approvedMaterial, jcamp, type LotFixture } from '../support/lot-fixtures';
import { ensureAppBuild, freePort, startApp, startWorker, stop, type Running } from '../support/processes';
import { TEST_AUDIT_KEY } from '../support/setup-db';

const LOTS = 10;
const CONTAINERS = 20; // 10 × 20 = 200 scans
const CONCURRENCY = 8;
const today = () => new Date().toISOString().slice(0, 10);

let apps: (Running & { url: string })[] = [];
let workers: Running[] = [];
let smtp: SmtpFake | null = null;
let fx: LotFixture;

beforeAll(async () => {
	ensureAppBuild();
	fx = await approvedMaterial();
	smtp = await startSmtpFake({ databaseUrl: inject('databaseUrl'), port: 0 });
	const env: NodeJS.ProcessEnv = {
		...process.env,
		DATABASE_URL: inject('databaseUrl'),
		AUTH_SECRET: process.env.AUTH_SECRET,
		LOTGATE_AUDIT_KEY: TEST_AUDIT_KEY,
		LOTGATE_AUDIT_CHECKPOINT_DIR: mkdtempSync(join(tmpdir(), 'lotgate-scale-checkpoints-')),
		LOTGATE_JOBS_IN_PROCESS: '0',
		LOTGATE_DEMO: '0',
		SMTP_URL: smtp.url,
		BODY_SIZE_LIMIT: '20M',
		DB_POOL_MAX: '6'
	};
	const ports = [await freePort(), await freePort()];
	[apps, workers] = await Promise.all([Promise.all(ports.map((p) => startApp(env, p))), Promise.all([startWorker(env), startWorker(env)])]);
}, 600_000);

afterAll(async () => {
	await Promise.all([...apps, ...workers].map((p) => stop(p)));
	await smtp?.close();
});

async function poll<T>(what: string, read: () => Promise<T>, done: (value: T) => boolean, timeoutMs = 90_000): Promise<T> {
	const until = Date.now() + timeoutMs;
	for (;;) {
		const value = await read();
		if (done(value)) return value;
		if (Date.now() > until) throw new Error(`timed out waiting for ${what}: ${JSON.stringify(value)}`);
		await new Promise((r) => setTimeout(r, 200));
	}
}

describe('two web processes and two job workers on one database', () => {
	it('stores every scan once, keeps one audit chain, runs each job once, and shows a build started on one app on the other', { timeout: 300_000 }, async () => {
		const tech = await makeUser(['technician']);
		const chemist = await makeUser(['chemometrician']);
		await makeUser(['procurement']); // alert mails go to procurement
		const techCookie = await sessionCookie(tech.actor);
		const chemistCookie = await sessionCookie(chemist.actor);

		// A material with a library, for a build queued through app A and watched through app B.
		const code = unique('SCALE').toUpperCase();
		const buildMaterial = await materials.create(rootActor, { code, name: `Scale-out build ${code}`, technique: 'NIR' });
		for (const [name, kind] of [['genuine', 'genuine'], ['diluted', 'suspect'], ['substituted', 'suspect']] as const) await materials.addClass(rootActor, buildMaterial.id, { name, kind });
		await insertLibrary(buildMaterial.id, standardRows(20), 1606, 400);

		const received = [];
		for (let i = 0; i < LOTS; i++) {
			received.push(await lots.create(tech.actor, { material: fx.materialCode, supplier: fx.supplierCode, supplierLot: unique('SO'), containers: CONTAINERS, receivedAt: today() }));
		}
		const lotIds = received.map((l) => l.id);

		const [appA, appB] = apps;
		const queued = await fetch(`${appA.url}/api/v1/materials/${buildMaterial.id}/models`, {
			method: 'POST',
			headers: { cookie: chemistCookie, origin: appA.url, 'content-type': 'application/json' },
			body: JSON.stringify({ recipe: 'snv,center', folds: 7, note: 'scale-out test build' })
		});
		expect(queued.status, await queued.clone().text()).toBe(201);
		const { id: versionId } = (await queued.json()) as { id: number };

		// App B reads the version while the workers build it.
		const seenOnB: { state: string; stage?: string; percent?: number }[] = [];
		const watching = (async () => {
			for (let i = 0; i < 3000; i++) {
				const res = await fetch(`${appB.url}/api/v1/models/${versionId}`, { headers: { cookie: chemistCookie } });
				const v = (await res.json()) as { state: string; progress: { stage?: string; percent?: number } };
				seenOnB.push({ state: v.state, stage: v.progress?.stage, percent: v.progress?.percent });
				if (v.state !== 'building') return v;
				await new Promise((r) => setTimeout(r, 40));
			}
			throw new Error('the build did not finish');
		})();

		// 200 uploads, alternating between the two web processes. Container 1 of the first three lots is diluted with
		// starch: each opens a supplier alert, whose mail one of the workers sends.
		const uploads: { lot: number; container: number; app: number }[] = [];
		const supplierLot = new Map(received.map((l) => [l.id, l.supplierLot]));
		for (const [l, lot] of received.entries()) for (let c = 1; c <= CONTAINERS; c++) uploads.push({ lot: lot.id, container: c, app: (l * CONTAINERS + c) % 2 });
		const statuses: number[] = [];
		let next = 0;
		await Promise.all(
			Array.from({ length: CONCURRENCY }, async () => {
				while (next < uploads.length) {
					const u = uploads[next++];
					const kind = u.container === 1 && lotIds.indexOf(u.lot) < 3 ? 'diluted-starch' : 'genuine';
					const bytes = jcamp(kind, fx.axis, 160_000 + u.lot * 100 + u.container, `lot ${supplierLot.get(u.lot)}, container ${u.container}`);
					const form = new FormData();
					form.set('file', new File([Buffer.from(bytes)], `c${u.container}.jdx`));
					form.set('container', String(u.container));
					const res = await fetch(`${apps[u.app].url}/api/v1/lots/${u.lot}/scans`, { method: 'POST', headers: { cookie: techCookie }, body: form });
					if (res.status !== 201) throw new Error(`upload ${u.lot}/${u.container} on app ${u.app}: ${res.status} ${await res.text()}`);
					statuses.push(res.status);
				}
			})
		);
		expect(statuses).toHaveLength(LOTS * CONTAINERS);

		// Every scan stored exactly once (one row per container, one spectrum per row).
		const stored = await sequelize().query<{ lot_id: number; container: number; n: number; spectra: number }>(
			'SELECT lot_id, container, count(*)::int AS n, count(DISTINCT spectrum_id)::int AS spectra FROM scans WHERE lot_id IN (:lotIds) GROUP BY lot_id, container',
			{ replacements: { lotIds }, type: QueryTypes.SELECT }
		);
		expect(stored).toHaveLength(LOTS * CONTAINERS);
		expect(stored.filter((r) => r.n !== 1 || r.spectra !== 1)).toEqual([]);
		const [{ events }] = await sequelize().query<{ events: number }>("SELECT count(*)::int AS events FROM audit_events WHERE action = 'lot.scan-added' AND entity = 'lot' AND entity_id IN (:ids)", {
			replacements: { ids: lotIds.map(String) },
			type: QueryTypes.SELECT
		});
		expect(events).toBe(LOTS * CONTAINERS);

		// The build ran once, on one worker, and app B showed it in progress and then finished.
		const final = (await watching) as { state: string; figures?: unknown };
		expect(final.state).toBe('draft');
		expect(seenOnB.some((s) => s.state === 'building' && s.stage && s.stage !== 'queued')).toBe(true);
		const built = await sequelize().query<{ n: number }>("SELECT count(*)::int AS n FROM audit_events WHERE action = 'model.built' AND entity_id = :id", {
			replacements: { id: String(versionId) },
			type: QueryTypes.SELECT
		});
		expect(built[0].n).toBe(1);
		const buildJobs = await sequelize().query<{ state: string; retry_count: number }>("SELECT state, retry_count FROM pgboss.job WHERE name = 'model-build' AND data->>'versionId' = :id", {
			replacements: { id: String(versionId) },
			type: QueryTypes.SELECT
		});
		expect(buildJobs).toEqual([{ state: 'completed', retry_count: 0 }]);

		// Each alert mail: one outbox row, one job, one attempt, one message at the mail server.
		const outbox = await poll(
			'the alert mails',
			() => sequelize().query<{ id: number; subject: string; state: string; attempts: number }>("SELECT id, subject, state, attempts FROM mail_outbox WHERE kind = 'alert' AND lot_id IN (:lotIds)", { replacements: { lotIds }, type: QueryTypes.SELECT }),
			(rows) => rows.length >= 3 && rows.every((r) => r.state !== 'queued')
		);
		// At least the three diluted containers (a synthetic genuine spectrum may also screen unknown and alert).
		expect(outbox.filter((r) => r.subject.includes('suspect (diluted-starch)'))).toHaveLength(3);
		expect(outbox.filter((r) => r.state !== 'sent' || r.attempts !== 1)).toEqual([]);
		const ids = outbox.map((r) => String(r.id));
		const mailJobs = await sequelize().query<{ outbox: string; n: number; completed: number }>(
			"SELECT data->>'outboxId' AS outbox, count(*)::int AS n, count(*) FILTER (WHERE state = 'completed' AND retry_count = 0)::int AS completed FROM pgboss.job WHERE name = 'mail-send' AND data->>'outboxId' IN (:ids) GROUP BY 1",
			{ replacements: { ids }, type: QueryTypes.SELECT }
		);
		expect(mailJobs).toHaveLength(outbox.length);
		expect(mailJobs.filter((j) => j.n !== 1 || j.completed !== 1)).toEqual([]);
		const delivered = await sequelize().query<{ subject: string; n: number }>('SELECT subject, count(*)::int AS n FROM mail_messages WHERE subject IN (:subjects) GROUP BY subject', {
			replacements: { subjects: outbox.map((r) => r.subject) },
			type: QueryTypes.SELECT
		});
		expect(delivered).toHaveLength(outbox.length);
		expect(delivered.filter((d) => d.n !== 1)).toEqual([]);

		// One chain for everything the five processes wrote: its lock serialised the appends across processes.
		const report = await audit.verifyChain();
		expect(report.ok, JSON.stringify(report.broken?.slice?.(0, 3))).toBe(true);
		// Without the cross-process lock, two appends would link to the same predecessor (a fork in the chain).
		const forks = await sequelize().query<{ n: number }>('SELECT (count(*) - count(DISTINCT prev_hash))::int AS n FROM audit_events', { type: QueryTypes.SELECT });
		expect(forks[0].n).toBe(0);
	});
});
