// Dispositions: the signed record of a lot decision (what the signature binds).
import { QueryTypes, type Transaction } from 'sequelize';
import { sequelize } from '../../db';
import { type CertificateContent } from '../../reports/certificate-pdf';
import * as lots from '../lots';
import { type Decision } from './schema';

export interface SignedRecord {
	kind: 'lot-disposition';
	dispositionId: number;
	decision: Decision;
	supersedes: number | null;
	lot: {
		id: number;
		internalLot: string;
		material: { code: string; name: string; technique: string };
		supplier: { code: string; name: string; status: string };
		supplierLot: string;
		containers: number;
		receivedAt: string;
		plan: CertificateContent['plan'];
	};
	identity: string;
	identitySummary: string;
	/**
	 * Every sampled container with its result (`verdict`) and the decisive scan (the latest counting scan with that
	 * verdict; null while it awaits one), plus its whole scan history with any invalidation.
	 */
	scans: {
		container: number;
		scanId: number | null;
		verdict: string;
		profile: string | null;
		ambiguous: boolean;
		fileName: string | null;
		sha256: string | null;
		modelVersionId: number | null;
		replicates?: { done: number; required: number };
		history?: RecordScan[];
	}[];
	/** Some container ever had a valid non-genuine scan: a release takes two signatures. */
	failingHistory?: boolean;
	modelVersions: { id: number; label: string; artefactSha256: string | null }[];
}

export interface RecordScan {
	scanId: number;
	verdict: string;
	profile: string | null;
	fileName: string;
	sha256: string;
	counts: boolean;
	invalidated: { cause: string; description: string; proposedBy: string; approvedBy: string; at: string } | null;
}

export async function buildRecord(lotId: number, dispositionId: number, decision: Decision, supersedes: number | null, tx: Transaction): Promise<SignedRecord> {
	const lot = await lots.get(lotId, tx);
	const byNumber = new Map(lot.containers.map((c) => [c.number, c]));
	// The decisive scan of a container: the latest counting scan whose verdict is the container's result.
	const counted = new Map(
		lot.containers
			.map((c) => [c.number, [...c.scans].reverse().find((s) => s.counts && s.verdict === c.result)] as const)
			.filter((e): e is readonly [number, lots.ScanView] => !!e[1])
	);
	const versionIds = [...new Set(lot.scans.filter((s) => s.counts).map((s) => s.modelVersion?.id).filter((v): v is number => v != null))].sort((a, b) => a - b);
	const versions = versionIds.length
		? await sequelize().query<{ id: number; version: number; artefact_sha256: string | null }>('SELECT id, version, artefact_sha256 FROM model_versions WHERE id IN (:ids) ORDER BY id', {
				replacements: { ids: versionIds },
				type: QueryTypes.SELECT,
				transaction: tx
			})
		: [];
	const plan = lot.plan as unknown as lots.StoredPlan & { sampled: number[] };
	return {
		kind: 'lot-disposition',
		dispositionId,
		decision,
		supersedes,
		lot: {
			id: lot.id,
			internalLot: lot.internalLot,
			material: { code: lot.material.code, name: lot.material.name, technique: lot.material.technique },
			supplier: { code: lot.supplier.code, name: lot.supplier.name, status: lot.supplier.status },
			supplierLot: lot.supplierLot,
			containers: lot.containerCount,
			receivedAt: lot.receivedAt,
			plan: {
				label: plan.label ?? plan.kind,
				count: plan.count ?? lot.sampled.length,
				containers: plan.containers ?? lot.containerCount,
				formula: plan.formula ?? '',
				basis: plan.basis ?? '',
				justification: plan.justification ?? null,
				seed: plan.seed ?? 0,
				sampled: [...lot.sampled].sort((a, b) => a - b)
			}
		},
		identity: lot.identity ?? 'incomplete',
		identitySummary: lot.outcome.summary,
		scans: [...lot.sampled]
			.sort((a, b) => a - b)
			.map((container) => {
				const s = counted.get(container);
				const c = byNumber.get(container)!;
				const extra = {
					replicates: c.replicates,
					history: c.scans.map((h) => ({ scanId: h.id, verdict: h.verdict, profile: h.profile, fileName: h.fileName, sha256: h.sha256, counts: h.counts, invalidated: h.invalidated }))
				};
				return s
					? { container, scanId: s.id, verdict: c.result ?? s.verdict, profile: c.profile ?? s.profile, ambiguous: s.ambiguous, fileName: s.fileName, sha256: s.sha256, modelVersionId: s.modelVersion?.id ?? null, ...extra }
					: { container, scanId: null, verdict: 'awaiting-scan', profile: null, ambiguous: false, fileName: null, sha256: null, modelVersionId: null, ...extra };
			}),
		failingHistory: lot.failingHistory,
		modelVersions: versions.map((v) => ({ id: v.id, label: `${lot.material.code} v${v.version}`, artefactSha256: v.artefact_sha256 }))
	};
}
