// Acceptance criteria per material (issue 12 §1): what a model version's validation must show before QA may approve
// it. A chemometrician proposes a revision; a QA user who did not propose it approves or refuses it with an electronic
// signature. The latest approved revision applies; a material without one uses the documented defaults.
import { labelClass } from '../../analysis/tree-spec';
import { QueryTypes, type Transaction } from 'sequelize';
import { z } from 'zod';
import { can } from '../../permissions';
import { checkCriteria, DEFAULT_CRITERIA, evaluateAcceptance, type AcceptanceCriteria, type AcceptanceResult, type ValidationItem } from '../../analysis/acceptance';
import { AnalysisError } from '../../analysis/errors';
import { sequelize, transaction } from '../db';
import { hasRole, type Actor } from './actor';
import * as audit from './audit';
import { conflict, forbidden, invalid, notFound, ServiceError } from './errors';
import * as materials from './materials';
import * as signatures from './signatures';

export const CRITERIA_MEANING = 'acceptance criteria approved';
export const CRITERIA_REFUSAL_MEANING = 'acceptance criteria refused';

export interface EffectiveCriteria {
	criteria: AcceptanceCriteria;
	/** null: the defaults (no approved revision yet) */
	revision: number | null;
	approvedBy: string | null;
	approvedAt: string | null;
}

interface CriteriaRow {
	id: number;
	material_id: number;
	revision: number;
	criteria: AcceptanceCriteria;
	reason: string;
	state: 'proposed' | 'approved' | 'refused' | 'superseded';
	proposed_by: number;
	proposed_at: Date;
	decided_by: number | null;
	decided_at: Date | null;
	signature_id: number | null;
	proposer: string;
	decider: string | null;
}

const SELECT = `SELECT c.*, p.name AS proposer, d.name AS decider FROM acceptance_criteria c
  JOIN users p ON p.id = c.proposed_by LEFT JOIN users d ON d.id = c.decided_by`;

const toPublic = (r: CriteriaRow) => ({
	id: Number(r.id),
	revision: r.revision,
	criteria: r.criteria,
	reason: r.reason,
	state: r.state,
	proposedBy: r.proposer,
	proposedById: Number(r.proposed_by),
	proposedAt: new Date(r.proposed_at).toISOString(),
	decidedBy: r.decider,
	decidedAt: r.decided_at ? new Date(r.decided_at).toISOString() : null
});

export async function list(materialRef: number | string) {
	const material = await materials.get(materialRef);
	const rows = await sequelize().query<CriteriaRow>(`${SELECT} WHERE c.material_id = :id ORDER BY c.revision DESC`, { replacements: { id: material.id }, type: QueryTypes.SELECT });
	return rows.map(toPublic);
}

export async function effective(materialId: number, tx?: Transaction): Promise<EffectiveCriteria> {
	const rows = await sequelize().query<CriteriaRow>(`${SELECT} WHERE c.material_id = :id AND c.state = 'approved' ORDER BY c.revision DESC LIMIT 1`, {
		replacements: { id: materialId },
		type: QueryTypes.SELECT,
		transaction: tx
	});
	const r = rows[0];
	if (!r) return { criteria: { ...DEFAULT_CRITERIA }, revision: null, approvedBy: null, approvedAt: null };
	return { criteria: { ...DEFAULT_CRITERIA, ...r.criteria }, revision: r.revision, approvedBy: r.decider, approvedAt: r.decided_at ? new Date(r.decided_at).toISOString() : null };
}

const num = (label: string) => z.coerce.number({ invalid_type_error: `${label} must be a number` });
export const proposalSchema = z.object({
	genuineTestMin: num('Genuine test spectra').int().optional(),
	genuineTestLotsMin: num('Genuine test lots').int().optional(),
	perSuspectMin: num('Spectra per suspect profile').int().optional(),
	challengeMin: num('Challenge spectra').int().optional(),
	specificityMin: num('Specificity').optional(),
	sensitivityMin: num('Sensitivity').optional(),
	cvFrrFactor: num('CV false-reject factor').optional(),
	cvFrrQuantile: num('CV false-reject quantile').optional(),
	reviewMonths: num('Review period').int().optional(),
	reason: z.string().trim().min(3, 'Write why the criteria change').max(2000)
});

/** A chemometrician proposes a revision (unset values keep the current effective ones). */
export async function propose(actor: Actor, materialRef: number | string, input: z.input<typeof proposalSchema>) {
	if (!hasRole(actor, can.buildModels) || actor.id == null) throw forbidden('Only a chemometrician proposes acceptance criteria');
	const data = proposalSchema.parse(input);
	const material = await materials.get(materialRef);
	const { reason, ...changes } = data;
	return transaction(async (tx) => {
		await sequelize().query('SELECT pg_advisory_xact_lock(7402040, :id)', { replacements: { id: material.id }, transaction: tx });
		const current = await effective(material.id, tx);
		const criteria = { ...current.criteria, ...Object.fromEntries(Object.entries(changes).filter(([, v]) => v !== undefined)) } as AcceptanceCriteria;
		try {
			checkCriteria(criteria);
		} catch (e) {
			if (e instanceof AnalysisError) throw invalid(e.message, e.message.split(' ')[0]);
			throw e;
		}
		const open = await sequelize().query<{ id: number }>("SELECT id FROM acceptance_criteria WHERE material_id = :id AND state = 'proposed'", { replacements: { id: material.id }, type: QueryTypes.SELECT, transaction: tx });
		if (open[0]) throw conflict(`${material.code} already has proposed acceptance criteria waiting for QA; they must be decided first`);
		const [{ n }] = await sequelize().query<{ n: number }>('SELECT coalesce(max(revision), 0) + 1 AS n FROM acceptance_criteria WHERE material_id = :id', { replacements: { id: material.id }, type: QueryTypes.SELECT, transaction: tx });
		const [created] = await sequelize().query<{ id: number }>(
			`INSERT INTO acceptance_criteria (material_id, revision, criteria, reason, proposed_by) VALUES (:m, :rev, :criteria, :reason, :by) RETURNING id`,
			{ replacements: { m: material.id, rev: Number(n), criteria: JSON.stringify(criteria), reason, by: actor.id }, type: QueryTypes.SELECT, transaction: tx }
		);
		await audit.record(tx, actor, { action: 'acceptance.proposed', entity: 'material', entityId: material.id, before: current, after: { revision: Number(n), criteria }, reason });
		return { id: Number(created.id), revision: Number(n), criteria, state: 'proposed' as const };
	});
}

export const decisionSchema = signatures.signatureFieldsSchema;

/** QA approves or refuses a proposed revision with an electronic signature; never the proposer. */
export async function decide(actor: Actor, materialRef: number | string, criteriaId: number, approveIt: boolean, input: z.input<typeof decisionSchema>) {
	if (!hasRole(actor, can.approveModels)) throw forbidden('Only a QA user decides on acceptance criteria');
	const data = decisionSchema.parse(input);
	const material = await materials.get(materialRef);
	return transaction(async (tx) => {
		const rows = await sequelize().query<CriteriaRow>(`${SELECT} WHERE c.id = :id AND c.material_id = :m FOR UPDATE OF c`, { replacements: { id: criteriaId, m: material.id }, type: QueryTypes.SELECT, transaction: tx });
		const r = rows[0];
		if (!r) throw notFound(`Acceptance criteria ${criteriaId} of ${material.code}`);
		if (r.proposed_by === actor.id) throw forbidden('You proposed these criteria: another QA user must decide on them');
		if (r.state !== 'proposed') throw conflict(`These criteria are ${r.state}, not waiting for a decision`);
		const manifestation = await signatures.sign(tx, actor, {
			password: data.password,
			meaning: approveIt ? CRITERIA_MEANING : CRITERIA_REFUSAL_MEANING,
			reason: data.reason,
			recordType: 'acceptance_criteria',
			recordId: r.id,
			recordHash: signatures.recordHash({ recordType: 'acceptance_criteria', material: material.code, revision: r.revision, criteria: r.criteria, proposedBy: r.proposed_by })
		});
		if (approveIt)
			await sequelize().query("UPDATE acceptance_criteria SET state = 'superseded' WHERE material_id = :m AND state = 'approved'", { replacements: { m: material.id }, transaction: tx });
		await sequelize().query('UPDATE acceptance_criteria SET state = :state, decided_by = :by, decided_at = :at, signature_id = :sig WHERE id = :id', {
			replacements: { id: r.id, state: approveIt ? 'approved' : 'refused', by: actor.id, at: new Date(manifestation.signedAt), sig: manifestation.id },
			transaction: tx
		});
		await audit.record(tx, actor, {
			action: approveIt ? 'acceptance.approved' : 'acceptance.refused',
			entity: 'material',
			entityId: material.id,
			before: { revision: r.revision, state: 'proposed' },
			after: { revision: r.revision, state: approveIt ? 'approved' : 'refused', signatureId: manifestation.id },
			reason: data.reason
		});
		return { id: Number(r.id), revision: r.revision, state: approveIt ? ('approved' as const) : ('refused' as const), signature: manifestation };
	});
}

export interface VersionAcceptance extends AcceptanceResult {
	criteriaRevision: number | null;
	criteriaValues: AcceptanceCriteria;
	evaluatedAt: string;
}

interface VersionFacts {
	material_id: number;
	validation: { verdicts: { entryId: number; label: string; role: string; verdict: string; profile: string | null }[] } | null;
	figures: { models: { name: string; alpha: number; n: number; cvFalseRejectRate: number }[] } | null;
}

/** A library label's class: "genuine/site-b" counts for genuine, "suspect/diluted/starch" for diluted (an alien's label stays). */
const materialClassOf = (label: string) => {
	const c = labelClass(label);
	return 'problem' in c ? label : c.className;
};

/** Evaluates a version's stored validation against the material's effective criteria. */
export async function evaluateVersion(versionId: number, tx?: Transaction): Promise<VersionAcceptance> {
	const rows = await sequelize().query<VersionFacts>('SELECT material_id, validation, figures FROM model_versions WHERE id = :id', { replacements: { id: versionId }, type: QueryTypes.SELECT, transaction: tx });
	const v = rows[0];
	if (!v) throw notFound(`Model version ${versionId}`);
	const { criteria, revision } = await effective(v.material_id, tx);
	const classes = await materials.classes(v.material_id);
	const genuine = classes.find((c) => c.kind === 'genuine')?.name;
	if (!genuine) throw new ServiceError(409, 'no-genuine', 'The material has no genuine class, so no acceptance criterion can be evaluated');
	const lots = await sequelize().query<{ id: number; supplier_lot: string | null; included: boolean | null }>(
		`SELECT e.id, e.supplier_lot, mm.included FROM library_entries e
		   LEFT JOIN model_memberships mm ON mm.library_entry_id = e.id AND mm.model_version_id = :v
		  WHERE e.material_id = :m`,
		{ replacements: { v: versionId, m: v.material_id }, type: QueryTypes.SELECT, transaction: tx }
	);
	const lotOf = new Map(lots.map((l) => [Number(l.id), l.supplier_lot]));
	const trainingLots = lots.filter((l) => l.included === true && l.supplier_lot).map((l) => l.supplier_lot!);
	const items: ValidationItem[] = (v.validation?.verdicts ?? [])
		.filter((x) => x.role === 'test' || x.role === 'challenge')
		.map((x) => ({ label: materialClassOf(x.label), role: x.role as 'test' | 'challenge', supplierLot: lotOf.get(Number(x.entryId)) ?? null, verdict: x.verdict, profile: x.profile }));
	const result = evaluateAcceptance(
		{
			genuine,
			suspects: classes.filter((c) => c.kind === 'suspect').map((c) => c.name),
			items,
			trainingLots,
			models: (v.figures?.models ?? []).map((m) => ({ name: m.name, alpha: m.alpha, n: m.n, cvFalseRejectRate: m.cvFalseRejectRate }))
		},
		criteria
	);
	return { ...result, criteriaRevision: revision, criteriaValues: criteria, evaluatedAt: new Date().toISOString() };
}

/** The approval gate: a 409 that lists every unmet criterion. */
export function refuseUnmet(label: string, a: VersionAcceptance): void {
	if (a.met) return;
	const which = a.criteriaRevision === null ? 'the default acceptance criteria' : `acceptance criteria revision ${a.criteriaRevision}`;
	throw new ServiceError(409, 'acceptance-unmet', `${label} cannot be approved: it does not meet ${which}. Unmet: ${a.unmet.map((u, i) => `(${i + 1}) ${u}`).join('; ')}`);
}

/** The review-by date of a version approved at `approvedAt`: `months` later (calendar months, UTC date). */
export function reviewByDate(approvedAt: Date, months: number): string {
	const d = new Date(Date.UTC(approvedAt.getUTCFullYear(), approvedAt.getUTCMonth() + months, approvedAt.getUTCDate()));
	// 31 March + 1 month would roll into May: clamp to the last day of the target month
	if (d.getUTCDate() !== approvedAt.getUTCDate()) d.setUTCDate(0);
	return d.toISOString().slice(0, 10);
}
