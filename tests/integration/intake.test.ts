// Spectra intake: the service, and the request path (the real hooks — identity, token check, role guard — then the route).
import { createHash } from 'node:crypto';
import { QueryTypes } from 'sequelize';
import { beforeAll, describe, expect, it } from 'vitest';
import { sequelize } from '../../src/lib/server/db';
import type { Actor } from '../../src/lib/server/services/actor';
import * as audit from '../../src/lib/server/services/audit';
import * as instruments from '../../src/lib/server/services/instruments';
import * as spectra from '../../src/lib/server/services/spectra';
import { makeUser, rootActor, unique } from '../support/factories';
import { call, type Handler } from '../support/http';
import { csvXy, jcampFile, truncatedJcamp } from '../support/intake-files';
import { parseSpectrumFile } from '../../src/lib/spectra';

const sha = (b: Uint8Array) => createHash('sha256').update(b).digest('hex');
const future = () => `${new Date().getFullYear() + 1}-12-31`;
const past = () => `${new Date().getFullYear() - 1}-01-31`;

let admin: Actor;
let tech: Actor;
let qa: Actor;
let routes: {
	spectra: typeof import('../../src/routes/api/v1/spectra/+server');
	one: typeof import('../../src/routes/api/v1/spectra/[id]/+server');
	raw: typeof import('../../src/routes/api/v1/spectra/[id]/raw/+server');
};

beforeAll(async () => {
	admin = (await makeUser(['admin'])).actor;
	tech = (await makeUser(['technician'])).actor;
	qa = (await makeUser(['qa'])).actor;
	routes = {
		spectra: await import('../../src/routes/api/v1/spectra/+server'),
		one: await import('../../src/routes/api/v1/spectra/[id]/+server'),
		raw: await import('../../src/routes/api/v1/spectra/[id]/raw/+server')
	};
});

function upload(files: { name: string; bytes: Uint8Array }[], init: { token?: string; fields?: Record<string, string> } = {}) {
	const form = new FormData();
	for (const f of files) form.append('file', new Blob([f.bytes as BlobPart]), f.name);
	for (const [k, v] of Object.entries(init.fields ?? {})) form.append(k, v);
	return new Request('http://127.0.0.1/api/v1/spectra', {
		method: 'POST',
		body: form,
		headers: init.token ? { authorization: `Bearer ${init.token}` } : {}
	});
}

async function countByName(fileName: string) {
	const rows = await sequelize().query<{ n: string }>('SELECT count(*) AS n FROM spectra WHERE file_name = :fileName', {
		replacements: { fileName },
		type: QueryTypes.SELECT
	});
	return Number(rows[0].n);
}

async function newInstrument(due = future()) {
	return instruments.create(admin, { name: unique('NIR'), technique: 'NIR', serial: unique('SN'), axisUnit: 'nm', qualificationDue: due });
}

describe('spectra service', () => {
	it('stores raw bytes with their SHA-256, the parsed spectrum and an audit event; the same bytes again are a 409 naming the record', async () => {
		const bytes = jcampFile(2000);
		const name = `${unique('good')}.jdx`;
		const [s] = await spectra.ingestFile(tech, { bytes, fileName: name, context: 'loose' });
		expect(s).toMatchObject({ sha256: sha(bytes), points: 2000, format: 'jcamp', axis: { from: 1100, to: 1100 + 2 * 1999, unit: 'nm' } });
		const got = await spectra.get(tech, s.id);
		expect(got.values).toHaveLength(2000);
		expect(got.axis[0]).toBe(1100);
		expect(got.uploadedBy).toBe(tech.id);
		const raw = await spectra.raw(tech, s.id);
		expect(Buffer.compare(raw.bytes, Buffer.from(bytes))).toBe(0);
		const events = await audit.list({ entity: 'spectrum', action: 'spectrum.stored' });
		expect(events.rows.some((e) => e.entityId === String(s.id))).toBe(true);

		const again = spectra.ingestFile(tech, { bytes, fileName: 'renamed.jdx', context: 'loose' });
		await expect(again).rejects.toMatchObject({ status: 409, code: 'duplicate', existing: { id: s.id, fileName: name } });
		await expect(again).rejects.toThrow(new RegExp(`spectrum ${s.id}`));
		// The same bytes in another context (a library) are a different record.
		const [inLibrary] = await spectra.ingestFile(tech, { bytes, fileName: name, context: 'library', contextId: 999_001 });
		expect(inLibrary.id).not.toBe(s.id);
	});

	it('refuses a bad file with file, line and reason, and leaves no row', async () => {
		const name = `${unique('cut')}.jdx`;
		const refused = spectra.ingestFile(tech, { bytes: truncatedJcamp(), fileName: name, context: 'loose' });
		await expect(refused).rejects.toMatchObject({ status: 400, code: 'truncated', file: name });
		await expect(refused).rejects.toThrow(/##END=/);
		expect(await countByName(name)).toBe(0);
		await expect(spectra.ingestFile(tech, { bytes: new Uint8Array([0, 1, 2, 3, 0, 255]), fileName: 'x.bin', context: 'loose' })).rejects.toMatchObject({ status: 415, code: 'binary' });
	});

	it('refuses an instrument past its qualification due date with the reason, and a role that may not upload', async () => {
		const old = await newInstrument(past());
		const name = `${unique('old')}.jdx`;
		await expect(spectra.ingestFile(tech, { bytes: jcampFile(), fileName: name, instrumentId: old.id, context: 'loose' })).rejects.toMatchObject({
			status: 422,
			code: 'instrument-not-qualified',
			message: expect.stringMatching(new RegExp(`${old.name} was due for qualification on ${past()}`))
		});
		expect(await countByName(name)).toBe(0);
		await expect(spectra.ingestFile(qa, { bytes: jcampFile(), fileName: name, context: 'loose' })).rejects.toMatchObject({ status: 403 });
		// Requalified: the new due date is recorded (audited), and the instrument is a source again.
		await instruments.update(admin, old.id, { qualificationDue: future() }, 'requalified in test');
		const [s] = await spectra.ingestFile(tech, { bytes: jcampFile(), fileName: name, instrumentId: old.id, context: 'loose' });
		expect(s.instrumentId).toBe(old.id);
	});

	it('keeps a CSV matrix file once and gives every row its own spectrum', async () => {
		const tag = unique('m');
		const axis = Array.from({ length: 60 }, (_, i) => 1200 + 10 * i);
		const rows = [`id,class,${axis.join(',')}`, ...['a', 'b', 'c'].map((id, r) => `${tag}-${id},genuine,${axis.map((_, i) => (0.3 + 0.01 * r + 0.001 * i).toFixed(4)).join(',')}`)];
		const bytes = new TextEncoder().encode(rows.join('\n'));
		const stored = await spectra.ingestFile(tech, { bytes, fileName: `${tag}.csv`, context: 'loose' });
		expect(stored.map((s) => s.rowIndex)).toEqual([0, 1, 2]);
		expect(stored[2].meta.class).toBe('genuine');
		const raw = await spectra.raw(tech, stored[2].id);
		expect(raw.sha256).toBe(sha(bytes));
		expect(Buffer.compare(raw.bytes, Buffer.from(bytes))).toBe(0);
	});

	it('stores axis and values exactly, and a gap as NULL when the recipe allows gaps', async () => {
		const bytes = jcampFile(800);
		const parsed = parseSpectrumFile(bytes, 'x.jdx');
		const [s] = await spectra.ingestFile(tech, { bytes, fileName: `${unique('exact')}.jdx`, context: 'loose' });
		const got = await spectra.get(tech, s.id);
		expect(got.axis).toEqual(Array.from(parsed.spectra[0].axis));
		expect(got.values).toEqual(Array.from(parsed.spectra[0].values));

		const lines = ['wavelength_nm,absorbance', ...Array.from({ length: 80 }, (_, i) => `${1200 + 5 * i},${i === 10 ? 'NaN' : (0.5 + i / 1000).toFixed(4)}`)];
		const gappy = new TextEncoder().encode(lines.join('\n'));
		await expect(spectra.ingestFile(tech, { bytes: gappy, fileName: `${unique('gap')}.csv`, context: 'loose' })).rejects.toMatchObject({ status: 400, code: 'non-finite' });
		const [g] = await spectra.ingestFile(tech, { bytes: gappy, fileName: `${unique('gap')}.csv`, context: 'loose', allowGaps: true });
		expect(g.missing).toBe(1);
		const back = await spectra.get(tech, g.id);
		expect(back.values[10]).toBeNull();
		expect(back.values[11]).toBe(0.511);
	});

	it('only an admin manages instruments and tokens; tokens are stored hashed and audited', async () => {
		await expect(instruments.create(tech, { name: unique('X'), technique: 'NIR', serial: 's', axisUnit: 'nm', qualificationDue: future() })).rejects.toMatchObject({ status: 403 });
		const inst = await newInstrument();
		await expect(instruments.createToken(tech, inst.id, 'dock')).rejects.toMatchObject({ status: 403 });
		const created = await instruments.createToken(admin, inst.id, 'dock PC');
		expect(created.token).toMatch(/^lgt_/);
		const stored = await sequelize().query<{ token_hash: string }>('SELECT token_hash FROM instrument_tokens WHERE id = :id', { replacements: { id: created.id }, type: QueryTypes.SELECT });
		expect(stored[0].token_hash).not.toContain(created.token);
		expect(JSON.stringify(await instruments.listTokens(admin, inst.id))).not.toContain(created.token);
		const events = await audit.list({ entity: 'instrument', action: 'instrument.token' });
		expect(events.rows.some((e) => e.entityId === String(inst.id) && e.action === 'instrument.token-created')).toBe(true);
		expect(JSON.stringify(events.rows)).not.toContain(created.token);
	});
});

describe('POST /api/v1/spectra', () => {
	it('stores only the good files of a batch, reports each file, and returns raw bytes byte-exact', async () => {
		const good1 = { name: `${unique('g1')}.jdx`, bytes: jcampFile(2000) };
		const good2 = { name: `${unique('g2')}.csv`, bytes: csvXy() };
		const bad = { name: `${unique('bad')}.jdx`, bytes: truncatedJcamp() };
		const empty = { name: `${unique('empty')}.csv`, bytes: new Uint8Array() };
		const res = await call(routes.spectra.POST as Handler, upload([good1, bad, good2, empty]), {}, tech);
		expect(res.status).toBe(201);
		const body = await res.json();
		expect(body.stored).toBe(2);
		expect(body.refused).toBe(2);
		expect(body.files[0]).toMatchObject({ file: good1.name, sha256: sha(good1.bytes), points: 2000, format: 'jcamp', axis: { from: 1100, to: 5098, unit: 'nm' } });
		expect(body.files[1].error).toMatchObject({ code: 'truncated', file: bad.name, line: expect.any(Number) });
		expect(body.files[2]).toMatchObject({ file: good2.name, format: 'csv-xy', points: 120 });
		expect(body.files[3].error).toMatchObject({ code: 'empty', file: empty.name });
		expect(await countByName(bad.name)).toBe(0);
		expect(await countByName(empty.name)).toBe(0);

		const rawRes = await call(routes.raw.GET as Handler, new Request(`http://127.0.0.1/api/v1/spectra/${body.files[0].id}/raw`), { id: String(body.files[0].id) }, qa);
		expect(rawRes.status).toBe(200);
		expect(rawRes.headers.get('content-type')).toBe('application/octet-stream');
		expect(rawRes.headers.get('content-disposition')).toContain(good1.name);
		const back = new Uint8Array(await rawRes.arrayBuffer());
		expect(sha(back)).toBe(sha(good1.bytes));
		expect(Buffer.compare(Buffer.from(back), Buffer.from(good1.bytes))).toBe(0);

		const meta = await call(routes.one.GET as Handler, new Request(`http://127.0.0.1/api/v1/spectra/${body.files[2].id}`), { id: String(body.files[2].id) }, tech);
		expect(meta.status).toBe(200);
		expect((await meta.json()).values).toHaveLength(120);
	});

	it('answers 409 for a duplicate, 413 for an oversized file, 415 for a request that is not multipart, 400 for too many files', async () => {
		const file = { name: `${unique('dup')}.jdx`, bytes: jcampFile() };
		expect((await call(routes.spectra.POST as Handler, upload([file]), {}, tech)).status).toBe(201);
		const dup = await call(routes.spectra.POST as Handler, upload([{ ...file, name: 'again.jdx' }]), {}, tech);
		expect(dup.status).toBe(409);
		const dupBody = await dup.json();
		expect(dupBody.error.code).toBe('duplicate');
		expect(dupBody.error.message).toContain(file.name);
		expect(dupBody.error.existing.id).toEqual(expect.any(Number));

		const previous = process.env.LOTGATE_MAX_UPLOAD_MB;
		process.env.LOTGATE_MAX_UPLOAD_MB = '0.01';
		try {
			const big = { name: `${unique('big')}.jdx`, bytes: jcampFile(2000) };
			const res = await call(routes.spectra.POST as Handler, upload([big]), {}, tech);
			expect(res.status).toBe(413);
			expect((await res.json()).error).toMatchObject({ code: 'too-large', file: big.name });
			expect(await countByName(big.name)).toBe(0);
		} finally {
			if (previous === undefined) delete process.env.LOTGATE_MAX_UPLOAD_MB;
			else process.env.LOTGATE_MAX_UPLOAD_MB = previous;
		}

		const json = new Request('http://127.0.0.1/api/v1/spectra', { method: 'POST', body: '{}', headers: { 'content-type': 'application/json' } });
		expect((await call(routes.spectra.POST as Handler, json, {}, tech)).status).toBe(415);

		process.env.LOTGATE_MAX_BATCH_FILES = '2';
		try {
			const res = await call(routes.spectra.POST as Handler, upload([1, 2, 3].map((i) => ({ name: `${unique('n')}-${i}.csv`, bytes: csvXy() }))), {}, tech);
			expect(res.status).toBe(400);
			expect((await res.json()).error.code).toBe('too-many-files');
		} finally {
			delete process.env.LOTGATE_MAX_BATCH_FILES;
		}
	});

	it('accepts an instrument token, and answers 401 for no identity, a bad token or a revoked one, 403 for other roles', async () => {
		const inst = await newInstrument();
		const { token, id: tokenId } = await instruments.createToken(admin, inst.id, 'line 3 dock');
		const ok = await call(routes.spectra.POST as Handler, upload([{ name: `${unique('tok')}.jdx`, bytes: jcampFile() }], { token }));
		expect(ok.status).toBe(201);
		const stored = await spectra.get(rootActor, (await ok.json()).files[0].id);
		expect(stored.instrumentId).toBe(inst.id);
		expect(stored.uploadedBy).toBeNull();

		// A token reaches only the upload routes.
		const read = await call(routes.one.GET as Handler, new Request(`http://127.0.0.1/api/v1/spectra/${stored.id}`, { headers: { authorization: `Bearer ${token}` } }), { id: String(stored.id) });
		expect(read.status).toBe(403);

		expect((await call(routes.spectra.POST as Handler, upload([{ name: 'anon.jdx', bytes: jcampFile() }]))).status).toBe(401);
		const bad = await call(routes.spectra.POST as Handler, upload([{ name: 'bad-token.jdx', bytes: jcampFile() }], { token: 'lgt_00000000_not-a-real-token' }));
		expect(bad.status).toBe(401);
		expect((await bad.json()).error.code).toBe('bad-token');

		await instruments.revokeToken(admin, tokenId, 'dock PC replaced');
		const revoked = await call(routes.spectra.POST as Handler, upload([{ name: `${unique('rev')}.jdx`, bytes: jcampFile() }], { token }));
		expect(revoked.status).toBe(401);

		expect((await call(routes.spectra.POST as Handler, upload([{ name: 'qa.jdx', bytes: jcampFile() }]), {}, qa)).status).toBe(403);
	});

	it('refuses the whole batch from an instrument past its qualification date, with the reason', async () => {
		const inst = await newInstrument(past());
		const { token } = await instruments.createToken(admin, inst.id, 'overdue');
		const name = `${unique('overdue')}.jdx`;
		const res = await call(routes.spectra.POST as Handler, upload([{ name, bytes: jcampFile() }], { token }));
		expect(res.status).toBe(422);
		const body = await res.json();
		expect(body.error.code).toBe('instrument-not-qualified');
		expect(body.error.message).toContain(inst.name);
		expect(await countByName(name)).toBe(0);
		// The same through a session naming the instrument.
		const bySession = await call(routes.spectra.POST as Handler, upload([{ name, bytes: jcampFile() }], { fields: { instrument: inst.name } }), {}, tech);
		expect(bySession.status).toBe(422);
	});
});
