// What the database layer hands to services: int8 and numeric as numbers (one parser, no Number() at each use), and raw
// rows checked against their zod schema outside production.
import { QueryTypes } from 'sequelize';
import { describe, expect, it } from 'vitest';
import { models, sequelize, transaction } from '../../src/lib/server/db';
import * as audit from '../../src/lib/server/services/audit';
import { rootActor } from '../support/factories';
import { col, rows, select, selectOne, z } from '../../src/lib/server/db/rows';
import { testAction } from '../support/audit-action';

describe('pg type parsers (int8, numeric)', () => {
	it('returns count(*), sums, bigint ids, int8[] and numeric as JavaScript numbers', async () => {
		const [row] = await sequelize().query<Record<string, unknown>>(
			`SELECT count(*) AS n, sum(x) AS total, 9007199254740991::int8 AS max_safe, -42::int8 AS negative,
			        ARRAY[1, 2, 3]::int8[] AS list, 12.5::numeric AS num, avg(x) AS mean
			   FROM (VALUES (1), (2), (4)) AS t(x)`,
			{ type: QueryTypes.SELECT }
		);
		expect(row).toEqual({ n: 3, total: 7, max_safe: 9007199254740991, negative: -42, list: [1, 2, 3], num: 12.5, mean: 7 / 3 });
		// avg of integers is numeric with many digits: it must come back as the nearest double, not text
		expect(typeof row.mean).toBe('number');
	});

	it('refuses an int8 beyond 2^53 − 1 instead of rounding it', async () => {
		await expect(sequelize().query('SELECT 9007199254740993::int8 AS big', { type: QueryTypes.SELECT })).rejects.toThrow(/outside JavaScript's safe integer range/);
	});

	it('gives model attributes declared BIGINT (spectra.id, audit_events.id) as numbers', async () => {
		await transaction((tx) => audit.record(tx, rootActor, { action: testAction('test.int8-model'), entity: 'test', reason: 'bigint id read through the model' }));
		const event = await models().AuditEvent.findOne({ where: { action: 'test.int8-model' }, order: [['id', 'DESC']] });
		expect(event).not.toBeNull();
		expect(typeof event!.id).toBe('number');
		expect(Number.isSafeInteger(event!.id)).toBe(true);
	});
});

describe('rows(): raw rows checked against their schema', () => {
	const Row = z.object({ id: col.id, name: col.text, at: col.date.nullable() });

	it('passes matching rows through unchanged and typed', async () => {
		const out = await select(Row, "SELECT 7 AS id, 'seven' AS name, NULL::timestamptz AS at");
		expect(out).toEqual([{ id: 7, name: 'seven', at: null }]);
		expect(await selectOne(Row, "SELECT 1 AS id, 'x' AS name, now() AS at WHERE false")).toBeUndefined();
	});

	it('fails loudly, naming the column, when a row does not match (outside production)', async () => {
		await expect(select(Row, "SELECT '7' AS id, 'seven' AS name, NULL AS at")).rejects.toThrow(/row 0 does not match its schema: id /);
		expect(() => rows(Row, [{ id: 1, name: 'a', at: null }, { id: 2, name: null, at: null }])).toThrow(/row 1 .*name/);
	});
});
