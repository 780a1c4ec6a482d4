// Issue 12 §2: the server's loader re-verifies a stored artefact on every load / cache fill and refuses a tampered one.
import { createHash } from 'node:crypto';
import { QueryTypes } from 'sequelize';
import { beforeAll, describe, expect, it } from 'vitest';
import { sealArtefact, serializeArtefact, type ModelArtefact } from '../../src/lib/analysis';
import { sequelize } from '../../src/lib/server/db';
import * as lots from '../../src/lib/server/services/lots';
import * as scans from '../../src/lib/server/services/scans';
import * as versions from '../../src/lib/server/services/model-versions';
import { makeUser, unique } from '../support/factories';
import { approvedMaterial, jcamp } from '../support/lot-fixtures';
import type { Actor } from '../../src/lib/server/services/actor';

const today = () => new Date().toISOString().slice(0, 10);
let tech: Actor;
beforeAll(async () => {
	tech = (await makeUser(['technician'])).actor;
});

async function lotWithScans(fx: Awaited<ReturnType<typeof approvedMaterial>>) {
	const lot = await lots.create(tech, { material: fx.materialCode, supplier: fx.supplierCode, supplierLot: unique('SL'), containers: 2, receivedAt: today() });
	const scanCount = async () =>
		Number((await sequelize().query<{ n: number }>('SELECT count(*)::int AS n FROM scans WHERE lot_id = :id', { replacements: { id: lot.id }, type: QueryTypes.SELECT }))[0].n);
	return { lot, scanCount, file: (seed: number) => ({ bytes: jcamp('genuine', fx.axis, seed, `C${seed}.jdx`), fileName: `C${seed}.jdx`, container: 1 }) };
}

describe('a tampered artefact in the database', () => {
	it('c_crit edited by hand (integrity field no longer matches): the scan is refused with 409, nothing stored', async () => {
		const fx = await approvedMaterial();
		await sequelize().query(`UPDATE model_versions SET artefact = jsonb_set(artefact, '{models,genuine,cCrit}', '1e9'::jsonb) WHERE id = :id`, { replacements: { id: fx.versionId } });
		const { lot, scanCount, file } = await lotWithScans(fx);
		await expect(scans.add(tech, lot.id, file(9101))).rejects.toMatchObject({ status: 409, code: 'artefact-refused', message: expect.stringMatching(/integrity check failed/) });
		expect(await scanCount()).toBe(0);
		await expect(versions.artefactText(fx.versionId)).rejects.toMatchObject({ status: 409, code: 'artefact-refused' });
	});

	it('c_crit edited and the artefact re-sealed with the recorded hash updated: the recomputed limit refuses it', async () => {
		const fx = await approvedMaterial();
		const o = JSON.parse(fx.artefactText) as ModelArtefact;
		o.models.genuine.cCrit = 1e9;
		const text = serializeArtefact(sealArtefact(o));
		await sequelize().query('UPDATE model_versions SET artefact = :text, artefact_sha256 = :sha WHERE id = :id', {
			replacements: { id: fx.versionId, text, sha: createHash('sha256').update(text).digest('hex') }
		});
		const { lot, scanCount, file } = await lotWithScans(fx);
		await expect(scans.add(tech, lot.id, file(9102))).rejects.toMatchObject({ status: 409, message: expect.stringMatching(/cCrit is 1000000000 but recomputes to/) });
		expect(await scanCount()).toBe(0);
	});

	it('the recorded SHA-256 changed (artefact intact): refused as not the artefact that was built', async () => {
		const fx = await approvedMaterial();
		await sequelize().query(`UPDATE model_versions SET artefact_sha256 = repeat('0', 64) WHERE id = :id`, { replacements: { id: fx.versionId } });
		const { lot, file } = await lotWithScans(fx);
		await expect(scans.add(tech, lot.id, file(9103))).rejects.toMatchObject({ status: 409, message: expect.stringMatching(/differs from the one recorded when it was built/) });
	});

	it('an untouched artefact screens normally (the check does not refuse what it should accept)', async () => {
		const fx = await approvedMaterial();
		const { lot, scanCount, file } = await lotWithScans(fx);
		const added = await scans.add(tech, lot.id, file(9104));
		expect(added.verdict).toBe('genuine');
		expect(await scanCount()).toBe(1);
	});
});
