// Lots: one lot by id or internal number, with its plan, containers and every scan.
import { verdictWord } from '../../../labels';
import { QueryTypes, type Transaction } from 'sequelize';
import { describePath, type Identification, type LevelEvidence, type Verdict } from '../../../analysis';
import { identificationText } from '../identification';
import { sequelize } from '../../db';
import * as containerResults from '../container-results';
import { notFound } from '../errors';
import { displayFileName } from '../../../validation/text';
import { isClosed, supplierFlagText, outcomeOf } from './outcome';
import { STATUS_LABELS, IDENTITY_LABELS, VALID_VERDICTS, type ScanVerdict, type LotRow } from './schema';
import { levelView, type ScanView, type ContainerView, statsView } from './view';

export async function lotRow(id: number, tx?: Transaction, lock = false): Promise<LotRow> {
	if (!Number.isInteger(id) || id < 1) throw notFound(`Lot ${id}`);
	const rows = await sequelize().query<LotRow>(
		`SELECT id, internal_lot, material_id, supplier_id, supplier_lot, containers, to_char(received_at, 'YYYY-MM-DD') AS received_at, plan, sampled,
		        status, identity, supplier_flag, created_by, created_at FROM lots WHERE id = :id${lock ? ' FOR UPDATE' : ''}`,
		{ replacements: { id }, type: QueryTypes.SELECT, transaction: tx }
	);
	if (!rows[0]) throw notFound(`Lot ${id}`);
	return rows[0];
}

/** A lot by its id or its internal lot number. */
export async function resolve(idOrInternal: string | number): Promise<number> {
	const text = String(idOrInternal).trim();
	if (/^\d+$/.test(text)) return Number(text);
	const rows = await sequelize().query<{ id: number }>('SELECT id FROM lots WHERE internal_lot = upper(:t)', { replacements: { t: text }, type: QueryTypes.SELECT });
	if (!rows[0]) throw notFound(`Lot ${text}`);
	return Number(rows[0].id);
}

/** The lot with its plan, containers and every scan (statistics without per-variable contributions). */
export async function get(idOrInternal: number | string, tx?: Transaction) {
	const id = typeof idOrInternal === 'number' ? idOrInternal : await resolve(idOrInternal);
	const lot = await lotRow(id, tx);
	const [meta] = await sequelize().query<Record<string, unknown>>(
		`SELECT m.code AS material_code, m.name AS material_name, m.technique, m.sampling_policy,
		        s.code AS supplier_code, s.name AS supplier_name, s.status AS supplier_status, u.name AS created_by_name
		   FROM materials m, suppliers s LEFT JOIN users u ON u.id = :createdBy WHERE m.id = :m AND s.id = :s`,
		{ replacements: { m: lot.material_id, s: lot.supplier_id, createdBy: lot.created_by ?? 0 }, type: QueryTypes.SELECT, transaction: tx }
	);
	const scanRows = await sequelize().query<Record<string, unknown>>(
		`SELECT sc.id, sc.container, sc.verdict, sc.profile, sc.ambiguous, sc.reason, sc.created_at, sc.rescreen_of, sc.spectrum_id, sc.model_review_overdue,
		        sc.result->'family' AS family, sc.result->'classes' AS classes,
		        sc.result->'path' AS path, sc.result->'levels' AS levels, sc.result->'identification' AS identification,
		        sc.model_version_id, mv.version AS model_version, sp.file_name, sp.title, sp.sha256, sp.format,
		        i.name AS instrument, u.name AS created_by
		   FROM scans sc JOIN spectra sp ON sp.id = sc.spectrum_id
		   LEFT JOIN model_versions mv ON mv.id = sc.model_version_id
		   LEFT JOIN instruments i ON i.id = sc.instrument_id
		   LEFT JOIN users u ON u.id = sc.created_by
		  WHERE sc.lot_id = :id ORDER BY sc.container, sc.id`,
		{ replacements: { id }, type: QueryTypes.SELECT, transaction: tx }
	);
	const invalidations = await containerResults.forLot(id, tx);
	const invalidationOf = containerResults.latestByScan(invalidations);
	const approved = new Set(invalidations.filter((v) => v.state === 'approved').map((v) => v.scanId));
	const replicates = await containerResults.replicatesOf(id, tx);
	const countedIds = new Set<number>();
	const latestValid = new Map<number, number>();
	for (const r of scanRows) {
		if (!(VALID_VERDICTS as readonly string[]).includes(r.verdict as string) || approved.has(Number(r.id))) continue;
		latestValid.set(Number(r.container), Number(r.id));
		countedIds.add(Number(r.id));
	}
	const materialCode = meta.material_code as string;
	const scans: ScanView[] = scanRows.map((r) => {
		const classes = (r.classes ?? null) as Record<string, Record<string, unknown>> | null;
		const family = (r.family ?? null) as Record<string, unknown> | null;
		return {
			id: Number(r.id),
			container: Number(r.container),
			verdict: r.verdict as ScanVerdict,
			profile: (r.profile as string | null) ?? null,
			ambiguous: r.ambiguous === true,
			reason: (r.reason as string | null) ?? null,
			counts: countedIds.has(Number(r.id)),
			invalidated: containerResults.invalidatedOf(invalidationOf.get(Number(r.id))),
			invalidation: invalidationOf.get(Number(r.id)) ?? null,
			statistics: family || classes ? { family: statsView(family), classes: Object.fromEntries(Object.entries(classes ?? {}).map(([k, s]) => [k, statsView(s)!])) } : null,
			path: (r.path as string[] | null) ?? [],
			pathLabel: describePath(r.verdict as Verdict, (r.path as string[] | null) ?? [], (r.levels as LevelEvidence[] | null) ?? [], verdictWord),
			levels: ((r.levels as LevelEvidence[] | null) ?? []).map(levelView),
			identification: r.identification ? { ...(r.identification as Identification), text: identificationText(r.identification as Identification, materialCode) } : null,
			modelVersion: r.model_version_id ? { id: Number(r.model_version_id), label: `${materialCode} v${r.model_version}` } : null,
			modelReviewOverdue: r.model_review_overdue === true,
			spectrumId: Number(r.spectrum_id),
			fileName: displayFileName(r.file_name as string),
			title: (r.title as string | null) ?? null,
			sha256: r.sha256 as string,
			format: r.format as string,
			instrument: (r.instrument as string | null) ?? null,
			createdBy: (r.created_by as string | null) ?? null,
			createdAt: new Date(r.created_at as Date).toISOString(),
			rescreenOf: r.rescreen_of ? Number(r.rescreen_of) : null
		};
	});
	const sampledSet = new Set(lot.sampled);
	const byContainer = new Map<number, ScanView[]>();
	for (const s of scans) byContainer.set(s.container, [...(byContainer.get(s.container) ?? []), s]);
	const numbers = Array.from({ length: lot.containers }, (_, i) => i + 1);
	const results = containerResults.resultsOf(scans, invalidations, numbers, replicates);
	const containers: ContainerView[] = numbers.map((number) => {
		const own = byContainer.get(number) ?? [];
		const r = results.get(number)!;
		const shown = own.length || sampledSet.has(number) ? r.result : null;
		return {
			number,
			sampled: sampledSet.has(number),
			countedScanId: latestValid.get(number) ?? null,
			result: shown,
			verdict: shown,
			profile: r.profile,
			decided: r.decided,
			replicates: { done: r.replicatesDone, required: r.replicatesRequired },
			everFailed: r.everFailed,
			scanCount: own.length,
			scans: own
		};
	});
	return {
		id: lot.id,
		internalLot: lot.internal_lot,
		material: { id: lot.material_id, code: materialCode, name: meta.material_name as string, technique: meta.technique as string, samplingPolicy: meta.sampling_policy as string },
		supplier: { id: lot.supplier_id, code: meta.supplier_code as string, name: meta.supplier_name as string, status: meta.supplier_status as string },
		supplierLot: lot.supplier_lot,
		containerCount: lot.containers,
		receivedAt: lot.received_at,
		plan: { ...lot.plan, sampled: lot.sampled },
		sampled: lot.sampled,
		status: lot.status,
		statusLabel: STATUS_LABELS[lot.status],
		identity: lot.identity,
		identityLabel: lot.identity ? IDENTITY_LABELS[lot.identity] : null,
		supplierFlag: lot.supplier_flag,
		supplierFlagText: supplierFlagText(lot.supplier_flag, meta.supplier_code as string),
		closed: isClosed(lot),
		outcome: outcomeOf(lot.status, lot.identity, containers.filter((c) => c.sampled), replicates),
		replicates,
		invalidations,
		/** A release needs two QA signatures: some sampled container ever had a valid non-genuine scan. */
		failingHistory: containers.some((c) => c.sampled && c.everFailed),
		createdBy: (meta.created_by_name as string | null) ?? null,
		createdAt: new Date(lot.created_at).toISOString(),
		containers,
		scans
	};
}

export type LotView = Awaited<ReturnType<typeof get>>;
