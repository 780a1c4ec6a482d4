// Model versions: what a QA signer sees above the signature (issue 17 item 6): the change against the version that
// screens lots now (excluded spectra with reasons, parameters in words, the version it retires) and the warnings.
import { QueryTypes } from 'sequelize';
import { approvalWarnings } from '../../../analysis/approval-warnings';
import { paramLabel, paramValue } from '../../../model-params';
import { sequelize } from '../../db';
import * as acceptance from '../acceptance';
import * as library from '../library';
import * as materials from '../materials';
import { diff } from './diff';
import { memberships, resolve, row } from './read';
import { EXCLUSION_LABELS, type ExclusionCategory } from './schema';

const categoryText = (c: ExclusionCategory | string | null) => (c ? (EXCLUSION_LABELS[c as ExclusionCategory] ?? c) : 'no category recorded');

export async function approvalView(versionRef: number | string) {
	const id = await resolve(versionRef);
	const v = await row(id);
	const material = await materials.get(v.material_id);
	const label = (n: number) => `${material.code} v${n}`;
	// The comparison is with the approved version (what approving retires); with none approved yet, with the parent.
	const [approved] = await sequelize().query<{ id: number; version: number }>("SELECT id, version FROM model_versions WHERE material_id = :m AND state = 'approved' AND id <> :id", {
		replacements: { m: v.material_id, id },
		type: QueryTypes.SELECT
	});
	const parent = v.parent_id ? await row(v.parent_id) : null;
	const against = approved ? { id: Number(approved.id), version: approved.version, basis: 'approved' as const } : parent ? { id: Number(parent.id), version: parent.version, basis: 'parent' as const } : null;
	const changes = against ? await diff(against.id, id) : null;
	const [members, training, criteria] = await Promise.all([memberships(id), library.entriesOf(v.material_id, ['training']), acceptance.effective(v.material_id)]);
	const entry = new Map(training.map((e) => [e.id, e]));
	const newly = new Set((changes?.training.excluded ?? []).map((e) => e.entryId));
	const describe = (entryId: number) => ({ entryId, label: entry.get(entryId)?.label ?? '?', sample: entry.get(entryId)?.sampleId ?? entry.get(entryId)?.fileName ?? `#${entryId}`, lot: entry.get(entryId)?.supplierLot ?? null });
	return {
		label: label(v.version),
		against: against ? { label: label(against.version), version: against.version, basis: against.basis } : null,
		retires: approved ? { label: label(approved.version), version: approved.version } : null,
		/** Every spectrum this version leaves out of training, with its reason; `isNew` when the comparison version still had it in. */
		excluded: members
			.filter((m) => !m.included)
			.map((m) => ({ ...describe(m.entryId), category: categoryText(m.category), reason: m.reason ?? 'none recorded', isNew: against ? newly.has(m.entryId) : true })),
		reincluded: (changes?.training.reincluded ?? []).map((e) => ({ ...describe(e.entryId), reason: e.reason ?? 'none recorded (re-included by a build made before a re-inclusion needed a reason)', previousReason: e.previousReason ?? 'none recorded' })),
		added: changes?.training.added.length ?? 0,
		params: (changes?.params ?? []).map((p) => ({ name: p.name, label: paramLabel(p.name), from: paramValue(p.name, p.from), to: paramValue(p.name, p.to) })),
		models: changes?.models ?? [],
		warnings: approvalWarnings(
			(v.figures?.models ?? []).map((m) => ({ name: m.name, n: m.n, alpha: m.alpha, cvFalseRejectRate: m.cvFalseRejectRate, warnings: m.warnings ?? [] })),
			v.acceptance?.criteriaValues ?? criteria.criteria
		)
	};
}
export type ApprovalView = Awaited<ReturnType<typeof approvalView>>;
