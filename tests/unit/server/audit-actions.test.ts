// Typed audit action names (issue 15 §7): one list, and the compiler refuses an action outside it. `npm run check`
// (svelte-check) checks the expect-error directives below: if an unknown action ever compiled, the unused directive
// would itself be the error.
import { describe, expect, test } from 'vitest';
import { AUDIT_ACTIONS, type AuditAction } from '../../../src/lib/server/services/audit-actions';
import type { AuditInput } from '../../../src/lib/server/services/audit';

describe('audit action names', () => {
	test('a listed action compiles; a misspelt or unlisted one does not', () => {
		const ok: AuditInput = { action: 'lot.scan-added', entity: 'lot' };
		// @ts-expect-error misspelt: not in AUDIT_ACTIONS
		const misspelt: AuditInput = { action: 'lot.scan-aded', entity: 'lot' };
		// @ts-expect-error any string is not an action
		const anyString: AuditAction = String('model.approved');
		expect([ok.action, misspelt.action, anyString]).toEqual(['lot.scan-added', 'lot.scan-aded', 'model.approved']);
	});

	test('each name is written once, as entity.past-tense-or-noun in lower case', () => {
		expect(new Set(AUDIT_ACTIONS).size).toBe(AUDIT_ACTIONS.length);
		for (const a of AUDIT_ACTIONS) expect(a).toMatch(/^[a-z]+\.[a-z]+(-[a-z]+)*$/);
	});
});
