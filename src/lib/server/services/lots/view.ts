// Lots: the shapes the lot page shows for a scan, a model level and a container.
import { type Identification, type LevelEvidence } from '../../../analysis';
import * as containerResults from '../container-results';
import { type ScanVerdict } from './schema';

export interface ModelStatsView {
	t2: number | null;
	t2Limit: number | null;
	spe: number | null;
	speLimit: number | null;
	h: number | null;
	v: number | null;
	c: number | null;
	cCrit: number | null;
	cOutlier: number | null;
	accepted: boolean;
	scores: number[];
}

export interface LevelView {
	node: string[];
	method: string;
	chosen: string | null;
	accepted: string[];
	ambiguous: boolean;
	reason: string | null;
	/** c/c_crit per child (one-class) or the classifier's score per child. */
	children: { name: string; ratio: number | null; score: number | null; accepted: boolean }[];
}

export function levelView(l: LevelEvidence): LevelView {
	return {
		node: l.node,
		method: l.method,
		chosen: l.chosen,
		accepted: l.accepted,
		ambiguous: l.ambiguous,
		reason: l.reason,
		children: l.children.map((c) => {
			const st = l.stats?.[c];
			const ratio = st && typeof st.c === 'number' && typeof st.cCrit === 'number' ? st.c / st.cCrit : null;
			return { name: c, ratio, score: l.classifier?.scores?.[c] ?? null, accepted: l.accepted.includes(c) || l.chosen === c };
		})
	};
}

export interface ScanView {
	id: number;
	container: number;
	verdict: ScanVerdict;
	profile: string | null;
	ambiguous: boolean;
	reason: string | null;
	/** A valid scan whose result counts for its container: every valid scan does, until an approved invalidation. */
	counts: boolean;
	/** null, or the approved invalidation of this scan. */
	invalidated: containerResults.Invalidated | null;
	/** The latest invalidation proposal of this scan in any state (proposed, approved, refused), for the lot page. */
	invalidation: containerResults.InvalidationView | null;
	statistics: { family: ModelStatsView | null; classes: Record<string, ModelStatsView> } | null;
	/** Model tree: the names chosen from level 1 down, and the result named along it (e.g. "suspect › diluted › starch"). */
	path: string[];
	pathLabel: string;
	/** Evidence per level walked (one-class: c/c_crit per child; discriminant: the classifier's scores). */
	levels: LevelView[];
	/** For a not-this-material scan: the other materials it resembles (evidence only). */
	identification: (Identification & { text: string | null }) | null;
	modelVersion: { id: number; label: string } | null;
	/** The version that screened this scan was past its review-by date then (issue 12 §1: "model review overdue"). */
	modelReviewOverdue: boolean;
	spectrumId: number;
	fileName: string;
	title: string | null;
	sha256: string;
	format: string;
	instrument: string | null;
	createdBy: string | null;
	createdAt: string;
	rescreenOf: number | null;
}

export interface ContainerView {
	number: number;
	sampled: boolean;
	/** The latest scan that counts for this container, if any. */
	countedScanId: number | null;
	/** The container's result under the result policy (src/lib/analysis/container-result.ts); null if not sampled and never scanned. */
	result: containerResults.ContainerResultWord | null;
	/** Same as result (kept for older callers). */
	verdict: ScanVerdict | 'awaiting-scan' | null;
	profile: string | null;
	/** The result is final: genuine with every replicate done, or failing. */
	decided: boolean;
	replicates: { done: number; required: number };
	/** Some valid scan of it was ever non-genuine (even if invalidated since). */
	everFailed: boolean;
	scanCount: number;
	/** Every scan of the container, in upload order. */
	scans: ScanView[];
}

const finite = (x: unknown) => (typeof x === 'number' && Number.isFinite(x) ? x : null);

export function statsView(s: Record<string, unknown> | null | undefined): ModelStatsView | null {
	if (!s) return null;
	return {
		t2: finite(s.t2),
		t2Limit: finite(s.t2Limit),
		spe: finite(s.spe),
		speLimit: finite(s.speLimit),
		h: finite(s.h),
		v: finite(s.v),
		c: finite(s.c),
		cCrit: finite(s.cCrit),
		cOutlier: finite(s.cOutlier),
		accepted: s.accepted === true,
		scores: Array.isArray(s.scores) ? (s.scores as number[]) : []
	};
}
