// Model versions: QA approval with an electronic signature; the previously approved version is retired.
import { can } from '../../../permissions';
import { QueryTypes } from 'sequelize';
import { z } from 'zod';
import { sequelize, transaction } from '../../db';
import { hasRole, type Actor } from '../actor';
import * as audit from '../audit';
import * as acceptance from '../acceptance';
import { conflict, forbidden } from '../errors';
import * as materials from '../materials';
import * as signatures from '../signatures';
import { row, resolve, iso } from './read';
import { APPROVAL_MEANING } from './schema';
import { type VersionRow } from './types';

export const approvalSchema = signatures.signatureFieldsSchema.extend({
	// A missing meaning is the signer's choice not yet made; any other text is not what this signature means.
	meaning: z.literal(APPROVAL_MEANING, {
		errorMap: (issue, ctx) => ({ message: ctx.data == null || ctx.data === '' ? `Choose the meaning of your signature ("${APPROVAL_MEANING}")` : `The meaning of this signature is "${APPROVAL_MEANING}"` })
	})
});

/** What the approval signature binds: the version record and the artefact's hash. */
function signedRecord(v: VersionRow, code: string) {
	return {
		recordType: 'model_version',
		id: v.id,
		material: code,
		version: v.version,
		params: v.params,
		artefactSha256: v.artefact_sha256,
		engineVersion: v.engine_version,
		builtBy: v.built_by,
		createdAt: iso(v.created_at),
		finishedAt: iso(v.finished_at)
	};
}

/** QA approves a draft: e-signature, never by its builder; the previous approved version of the material is retired. */
export async function approve(actor: Actor, versionRef: number | string, input: z.input<typeof approvalSchema>) {
	if (!hasRole(actor, can.approveModels)) throw forbidden('Only a QA user approves model versions');
	const data = approvalSchema.parse(input);
	const versionId = await resolve(versionRef);
	return transaction(async (tx) => {
		const v = await row(versionId, tx, true);
		if (v.built_by === actor.id) throw forbidden('You built this version: another QA user must approve it (nobody approves their own work)');
		if (v.state !== 'draft') throw conflict(`Only a draft can be approved; this version is ${v.state}`);
		if (!v.artefact || !v.artefact_sha256) throw conflict('This version has no artefact');
		const material = await materials.get(v.material_id);
		// issue 12 §1: the validation must meet the material's acceptance criteria (409 listing the unmet ones)
		const evaluation = await acceptance.evaluateVersion(v.id, tx);
		acceptance.refuseUnmet(`${material.code} v${v.version}`, evaluation);
		await sequelize().query('SELECT pg_advisory_xact_lock(7402001, :materialId)', { replacements: { materialId: v.material_id }, transaction: tx });
		const manifestation = await signatures.sign(tx, actor, {
			password: data.password,
			meaning: data.meaning,
			reason: data.reason,
			recordType: 'model_version',
			recordId: v.id,
			recordHash: signatures.recordHash(signedRecord(v, material.code))
		});
		const previous = await sequelize().query<{ id: number; version: number }>(
			"UPDATE model_versions SET state = 'retired', retired_at = now() WHERE material_id = :materialId AND state = 'approved' RETURNING id, version",
			{ replacements: { materialId: v.material_id }, type: QueryTypes.SELECT, transaction: tx }
		);
		for (const p of previous) {
			await audit.record(tx, actor, {
				action: 'model.retired',
				entity: 'model_version',
				entityId: p.id,
				before: { state: 'approved' },
				after: { state: 'retired', replacedBy: v.id },
				reason: `replaced by ${material.code} v${v.version}`
			});
		}
		await sequelize().query(
			"UPDATE model_versions SET state = 'approved', approved_by = :by, approved_at = :at, approval_signature_id = :sig, acceptance = :acceptance, review_by = :reviewBy WHERE id = :id",
			{
				replacements: {
					id: v.id,
					by: actor.id,
					at: new Date(manifestation.signedAt),
					sig: manifestation.id,
					acceptance: JSON.stringify(evaluation),
					reviewBy: acceptance.reviewByDate(new Date(manifestation.signedAt), evaluation.criteriaValues.reviewMonths)
				},
				transaction: tx
			}
		);
		await audit.record(tx, actor, {
			action: 'model.approved',
			entity: 'model_version',
			entityId: v.id,
			before: { state: 'draft' },
			after: { state: 'approved', signatureId: manifestation.id, recordHash: manifestation.recordHash, retired: previous.map((p) => p.id), acceptanceCriteriaRevision: evaluation.criteriaRevision },
			reason: data.reason
		});
		return { manifestation, retired: previous.map((p) => ({ id: Number(p.id), version: p.version })) };
	});
}
