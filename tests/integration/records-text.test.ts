// Issue 10 §1: NUL, unpaired surrogates and bidi controls in every kind of free-text field are refused at the
// boundary with a 400 naming the field, and nothing is written (no row, no audit event).
import { QueryTypes } from 'sequelize';
import { beforeAll, describe, expect, it } from 'vitest';
import { sequelize } from '../../src/lib/server/db';
import type { Actor } from '../../src/lib/server/services/actor';
import { makeUser, unique } from '../support/factories';
import { call, jsonRequest, type Handler } from '../support/http';
import { jcampFile } from '../support/intake-files';
import { approvedMaterial, type LotFixture } from '../support/lot-fixtures';

const BAD = { NUL: '\u0000', surrogate: '\ud800', bidi: '\u202E' } as const;
const count = async (sql: string) => Number((await sequelize().query<{ n: string }>(sql, { type: QueryTypes.SELECT }))[0].n);
const routes = {
	suppliers: () => import('../../src/routes/api/v1/suppliers/+server'),
	statusRequests: () => import('../../src/routes/api/v1/suppliers/[code]/status-requests/+server'),
	lots: () => import('../../src/routes/api/v1/lots/+server'),
	instruments: () => import('../../src/routes/api/v1/instruments/+server'),
	tokens: () => import('../../src/routes/api/v1/instruments/[id]/tokens/+server'),
	materials: () => import('../../src/routes/api/v1/materials/+server'),
	classes: () => import('../../src/routes/api/v1/materials/[id]/classes/+server'),
	builds: () => import('../../src/routes/api/v1/materials/[id]/models/+server'),
	exclusions: () => import('../../src/routes/api/v1/models/[id]/exclusions/+server'),
	dispositions: () => import('../../src/routes/api/v1/lots/[id]/dispositions/+server'),
	acknowledge: () => import('../../src/routes/api/v1/alerts/[id]/acknowledge/+server'),
	spectra: () => import('../../src/routes/api/v1/spectra/+server'),
	invalidation: () => import('../../src/routes/api/v1/lots/[id]/scans/[scanId]/invalidation/+server')
};

let admin: Actor, tech: Actor, buyer: Actor, chemist: Actor, qa: Actor;
let fixture: LotFixture;
let lotId: number;
let instrumentId: number;

interface Case {
	kind: string;
	field: string;
	actor: () => Actor;
	route: () => Promise<{ POST: Handler }>;
	path: () => string;
	params: () => Record<string, string>;
	body: (bad: string) => Record<string, unknown>;
	/** Rows of the table the request would write to. */
	rows: string;
}

const cases: Case[] = [
	{ kind: 'supplier name', field: 'name', actor: () => buyer, route: routes.suppliers, path: () => '/api/v1/suppliers', params: () => ({}), body: (b) => ({ code: unique('S').toUpperCase(), name: `Acme${b} Chemicals` }), rows: 'SELECT count(*) AS n FROM suppliers' },
	{ kind: 'reason given with a change', field: 'reason', actor: () => buyer, route: routes.suppliers, path: () => '/api/v1/suppliers', params: () => ({}), body: (b) => ({ code: unique('S').toUpperCase(), name: 'Acme Chemicals', reason: `new${b} source` }), rows: 'SELECT count(*) AS n FROM suppliers' },
	{ kind: 'supplier status reason', field: 'reason', actor: () => buyer, route: routes.statusRequests, path: () => `/api/v1/suppliers/${fixture.supplierCode}/status-requests`, params: () => ({ code: fixture.supplierCode }), body: (b) => ({ status: 'on-watch', reason: `late ${b}deliveries` }), rows: 'SELECT count(*) AS n FROM supplier_status_requests' },
	{ kind: 'lot number', field: 'supplierLot', actor: () => tech, route: routes.lots, path: () => '/api/v1/lots', params: () => ({}), body: (b) => ({ material: fixture.materialCode, supplier: fixture.supplierCode, supplierLot: `L-${b}42`, containers: 2, receivedAt: '2025-03-04' }), rows: 'SELECT count(*) AS n FROM lots' },
	{ kind: 'lot plan justification', field: 'justification', actor: () => tech, route: routes.lots, path: () => '/api/v1/lots', params: () => ({}), body: (b) => ({ material: fixture.materialCode, supplier: fixture.supplierCode, supplierLot: unique('L'), containers: 2, receivedAt: '2025-03-04', justification: `why${b}` }), rows: 'SELECT count(*) AS n FROM lots' },
	{ kind: 'instrument serial', field: 'serial', actor: () => admin, route: routes.instruments, path: () => '/api/v1/instruments', params: () => ({}), body: (b) => ({ name: unique('NIR'), technique: 'NIR', serial: `SN-${b}1`, axisUnit: 'nm', qualificationDue: '2099-01-01' }), rows: 'SELECT count(*) AS n FROM instruments' },
	{ kind: 'token label', field: 'label', actor: () => admin, route: routes.tokens, path: () => `/api/v1/instruments/${instrumentId}/tokens`, params: () => ({ id: String(instrumentId) }), body: (b) => ({ label: `bench ${b}2` }), rows: 'SELECT count(*) AS n FROM instrument_tokens' },
	{ kind: 'material name', field: 'name', actor: () => chemist, route: routes.materials, path: () => '/api/v1/materials', params: () => ({}), body: (b) => ({ code: unique('M').toUpperCase(), name: `Lactose${b} 200`, technique: 'NIR' }), rows: 'SELECT count(*) AS n FROM materials' },
	{ kind: 'class description', field: 'description', actor: () => chemist, route: routes.classes, path: () => `/api/v1/materials/${fixture.materialCode}/classes`, params: () => ({ id: fixture.materialCode }), body: (b) => ({ name: unique('c'), kind: 'suspect', description: `talc${b} cut` }), rows: 'SELECT count(*) AS n FROM material_classes' },
	{ kind: 'model build note', field: 'note', actor: () => chemist, route: routes.builds, path: () => `/api/v1/materials/${fixture.materialCode}/models`, params: () => ({ id: fixture.materialCode }), body: (b) => ({ recipe: 'snv,center', note: `retrain${b}` }), rows: 'SELECT count(*) AS n FROM model_versions' },
	{ kind: 'exclusion reason', field: 'reason', actor: () => chemist, route: routes.exclusions, path: () => `/api/v1/models/${fixture.versionId}/exclusions`, params: () => ({ id: String(fixture.versionId) }), body: (b) => ({ entryIds: [1], category: 'other', reason: `outlier${b}` }), rows: 'SELECT count(*) AS n FROM model_memberships' },
	{ kind: 'disposition reason', field: 'reason', actor: () => qa, route: routes.dispositions, path: () => `/api/v1/lots/${lotId}/dispositions`, params: () => ({ id: String(lotId) }), body: (b) => ({ decision: 'quarantine', password: 'correct-horse-battery', meaning: 'quarantined', reason: `hold${b} for review` }), rows: 'SELECT count(*) AS n FROM dispositions' },
	{ kind: 'disposition meaning', field: 'meaning', actor: () => qa, route: routes.dispositions, path: () => `/api/v1/lots/${lotId}/dispositions`, params: () => ({ id: String(lotId) }), body: (b) => ({ decision: 'quarantine', password: 'correct-horse-battery', meaning: `quarantined${b}`, reason: 'hold for review' }), rows: 'SELECT count(*) AS n FROM dispositions' },
	{ kind: 'invalidation description', field: 'description', actor: () => tech, route: routes.invalidation, path: () => `/api/v1/lots/${lotId}/scans/1/invalidation`, params: () => ({ id: String(lotId), scanId: '1' }), body: (b) => ({ cause: 'other', description: `probe window${b} was dirty` }), rows: 'SELECT count(*) AS n FROM scan_invalidations' },
	{ kind: 'alert note', field: 'note', actor: () => buyer, route: routes.acknowledge, path: () => '/api/v1/alerts/1/acknowledge', params: () => ({ id: '1' }), body: (b) => ({ note: `seen${b}, calling the supplier` }), rows: "SELECT count(*) AS n FROM alerts WHERE state <> 'open'" }
];

beforeAll(async () => {
	admin = (await makeUser(['admin'])).actor;
	tech = (await makeUser(['technician'])).actor;
	buyer = (await makeUser(['procurement'])).actor;
	chemist = (await makeUser(['chemometrician'])).actor;
	qa = (await makeUser(['qa'])).actor;
	fixture = await approvedMaterial({ points: 300 });
	const lots = await import('../../src/lib/server/services/lots');
	lotId = (await lots.create(tech, { material: fixture.materialCode, supplier: fixture.supplierCode, supplierLot: unique('L'), containers: 2, receivedAt: '2025-03-04' })).id;
	const instruments = await import('../../src/lib/server/services/instruments');
	instrumentId = (await instruments.create(admin, { name: unique('NIR'), technique: 'NIR', serial: unique('SN'), axisUnit: 'nm', qualificationDue: '2099-01-01' })).id;
}, 120_000);

const auditCount = () => count('SELECT count(*) AS n FROM audit_events');

describe('free text at the boundary', () => {
	for (const c of cases) {
		for (const [name, bad] of Object.entries(BAD)) {
			it(`${c.kind}: ${name} → 400 naming "${c.field}", nothing written`, async () => {
				const [rows, events] = [await count(c.rows), await auditCount()];
				const res = await call((await c.route()).POST, jsonRequest('POST', c.path(), c.body(bad)), c.params(), c.actor());
				const body = await res.json();
				expect(res.status, JSON.stringify(body)).toBe(400);
				expect(body.error.field).toBe(c.field);
				expect(body.error.message).toMatch(/NUL|surrogate|bidirectional/);
				expect(await count(c.rows)).toBe(rows);
				expect(await auditCount()).toBe(events);
			});
		}
	}

	it('the same fields accept ordinary text, normalised to NFC (the checks above are not refusing everything)', async () => {
		const code = unique('S').toUpperCase();
		const res = await call((await routes.suppliers()).POST, jsonRequest('POST', '/api/v1/suppliers', { code, name: 'Socie\u0301te\u0301 Lactose' }), {}, buyer);
		expect(res.status).toBe(201);
		expect((await res.json()).name).toBe('Soci\u00e9t\u00e9 Lactose');
	});

	it('a user name with a bidi override is refused by the service (admin form and seed alike)', async () => {
		const users = await import('../../src/lib/server/services/users');
		await expect(users.create(admin, { email: `${unique('u')}@test.example`, name: 'Eve \u202Etnega', password: 'correct-horse-battery-9', roles: ['technician'] })).rejects.toMatchObject({ issues: [{ path: ['name'] }] });
	});
});

describe('uploaded file names', () => {
	const upload = (fileName: string, bytes: Uint8Array) => {
		const form = new FormData();
		form.append('file', new Blob([bytes as BlobPart]), fileName);
		return new Request('http://127.0.0.1/api/v1/spectra', { method: 'POST', body: form });
	};
	const spectraRows = () => count('SELECT count(*) AS n FROM spectra');

	it.each([
		['NUL', 'scan\u0000.jdx'],
		['a control character', 'scan\u0007.jdx']
	])('%s in a file name → 400, no spectrum stored', async (_, name) => {
		const [rows, events] = [await spectraRows(), await auditCount()];
		const res = await call((await routes.spectra()).POST, upload(name, jcampFile(200)), {}, tech);
		expect(res.status).toBe(400);
		const body = await res.json();
		expect(body.error.code).toBe('invalid-file-name');
		expect(JSON.stringify(body)).not.toMatch(/\\u0000|\\u0007/);
		expect(await spectraRows()).toBe(rows);
		expect(await auditCount()).toBe(events);
	});

	it('a bidi override is kept in the record, but shown and sent back only sanitised (filename*)', async () => {
		const name = `${unique('invoice')}\u202Efdj.exe`;
		const res = await call((await routes.spectra()).POST, upload(name, jcampFile(200)), {}, tech);
		expect(res.status).toBe(201);
		const body = await res.json();
		expect(body.files[0].file).not.toContain('\u202E');
		const id = body.files[0].id;
		const [stored] = await sequelize().query<{ file_name: string }>('SELECT file_name FROM spectra WHERE id = :id', { replacements: { id }, type: QueryTypes.SELECT });
		expect(stored.file_name).toBe(name);
		const raw = await import('../../src/routes/api/v1/spectra/[id]/raw/+server');
		const download = await call(raw.GET, new Request(`http://127.0.0.1/api/v1/spectra/${id}/raw`), { id: String(id) }, tech);
		expect(download.status).toBe(200);
		const disposition = download.headers.get('content-disposition')!;
		expect(disposition).toMatch(/^attachment; filename="[^"]*_fdj\.exe"; filename\*=UTF-8''.*_fdj\.exe$/);
		expect(disposition).not.toMatch(/%E2%80%AE|\u202E/);
	});
});

describe('CSV export of the audit trail (OWASP CSV injection)', () => {
	it('neutralises reasons, names and values that a spreadsheet would run as formulas', async () => {
		const code = unique('S').toUpperCase();
		const res = await call((await routes.suppliers()).POST, jsonRequest('POST', '/api/v1/suppliers', { code, name: '=HYPERLINK("http://evil.example","x")', reason: '@SUM(1+1)' }), {}, buyer);
		expect(res.status).toBe(201);
		const exportRoute = await import('../../src/routes/(app)/audit/export.csv/+server');
		const out = await call(exportRoute.GET as Handler, new Request(`http://127.0.0.1/audit/export.csv?entity=supplier`), {}, admin, '/(app)/audit/export.csv');
		expect(out.status).toBe(200);
		const Papa = (await import('papaparse')).default;
		const rows = Papa.parse<string[]>((await out.text()).trim()).data;
		const mine = rows.find((r) => r.some((c) => c.includes(code)))!;
		expect(mine).toBeDefined();
		expect(mine).toContain("'@SUM(1+1)");
		expect(rows.flat().some((c) => /^[=+\-@\t\r]/.test(c))).toBe(false);
	});
});
