// The capability map in $lib/permissions: what each role reaches in the hook and holds in the handlers.
import { describe, expect, it } from 'vitest';
import { ANY_SIGNED_IN, can, holds, mayEnter, ROLE_LABELS, ROLES, type Capability } from '../../src/lib/permissions';

const READS: Capability[] = ['read', 'readModels', 'readLibrary', 'readSpectra', 'readAlerts', 'readAudit', 'exportAudit'];
const CHANGES = (Object.keys(can) as Capability[]).filter((c) => !READS.includes(c));

describe('one list of roles and one capability map', () => {
	it('labels every role and lists only known roles in every capability', () => {
		expect(Object.keys(ROLE_LABELS).sort()).toEqual([...ROLES].sort());
		for (const roles of Object.values(can)) for (const role of roles) expect(ROLES).toContain(role);
	});

	it('ANY_SIGNED_IN is every role, so a new role is let in wherever "anyone signed in" is meant', () => {
		expect([...ANY_SIGNED_IN].sort()).toEqual([...ROLES].sort());
		for (const role of ROLES) expect(holds([role], can.read)).toBe(true);
	});

	it('keeps the rules the product had before the map (spot checks of the README table)', () => {
		expect(holds(['technician'], can.uploadScans)).toBe(true);
		expect(holds(['chemometrician'], can.uploadScans)).toBe(false);
		expect(holds(['chemometrician'], can.uploadSpectra)).toBe(true);
		expect(holds(['qa'], can.uploadSpectra)).toBe(false);
		expect(holds(['procurement'], can.readModels)).toBe(false);
		expect(holds(['qa'], can.signDispositions)).toBe(true);
		expect(holds(['admin'], can.signDispositions)).toBe(false);
		expect(holds(['admin'], can.approveModels)).toBe(false);
		expect(holds(['qa'], can.handleAlerts)).toBe(false);
		expect(holds(['procurement'], can.requestSupplierStatus)).toBe(true);
		expect(holds(['admin'], can.requestSupplierStatus)).toBe(false);
		expect(mayEnter(['technician'], '/admin/users')).toBe(false);
		expect(mayEnter(['procurement'], '/intake')).toBe(false);
		expect(mayEnter(['technician'], '/audit')).toBe(false);
		expect(mayEnter(['qa'], '/audit/export.csv')).toBe(true);
	});
});

describe('the auditor role: reads everything, exports the audit trail, changes nothing', () => {
	it('holds every read capability, the audit export among them', () => {
		for (const capability of READS) expect(holds(['auditor'], can[capability]), capability).toBe(true);
	});

	it('holds no capability that changes anything', () => {
		expect(CHANGES.length).toBeGreaterThan(10);
		for (const capability of CHANGES) expect(holds(['auditor'], can[capability]), capability).toBe(false);
	});

	it('enters the reading areas in the hook, not the admin area', () => {
		for (const path of ['/', '/lots', '/materials', '/suppliers', '/intake', '/alerts', '/audit', '/audit/export.csv', '/api/v1/audit', '/api/v1/alerts', '/api/v1/lots']) {
			expect(mayEnter(['auditor'], path), path).toBe(true);
		}
		for (const path of ['/admin', '/admin/users', '/api/v1/users', '/api/v1/instruments']) expect(mayEnter(['auditor'], path), path).toBe(false);
	});
});
