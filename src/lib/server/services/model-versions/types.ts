// Model versions: the stored row and the figures, projections and validation kept with it.
import { type ModelArtefact, type ValidationReport } from '../../../analysis';
import * as acceptance from '../acceptance';
import { type ExclusionCategory, type BuildParams } from './schema';

export interface Pending {
	exclude: { entryId: number; category: ExclusionCategory; reason: string }[];
	include: { entryId: number; reason: string }[];
}

export type VersionState = 'building' | 'failed' | 'draft' | 'approved' | 'retired';

export interface VersionRow {
	id: number;
	material_id: number;
	version: number;
	state: VersionState;
	params: BuildParams;
	artefact: ModelArtefact | null;
	artefact_sha256: string | null;
	engine_version: string | null;
	progress: Progress;
	error: string | null;
	job_id: string | null;
	parent_id: number | null;
	figures: Figures | null;
	validation: Validation | null;
	built_by: number;
	created_at: Date;
	finished_at: Date | null;
	approved_by: number | null;
	approved_at: Date | null;
	approval_signature_id: number | null;
	retired_at: Date | null;
	pending: Pending;
	change_note: string | null;
	review_by?: string | Date | null;
	revalidation?: { kind: string; at: string; detail: string }[];
	acceptance?: acceptance.VersionAcceptance | null;
}

export interface Progress {
	stage?: string;
	model?: string;
	fold?: number;
	folds?: number;
	done?: number;
	total?: number;
	message?: string;
	percent?: number;
	at?: string;
}

export interface ModelFigure {
	name: string;
	kind: 'family' | 'genuine' | 'suspect';
	n: number;
	components: number;
	componentsRule: 'auto' | 'fixed';
	suggested: number;
	alpha: number;
	cCrit: number;
	cvFalseRejectRate: number;
	trainingFalseRejectRate: number;
	/** CV false-reject rate at other α, from the cross-validated c of the training objects. */
	frrByAlpha: { alpha: number; cv: number; training: number }[];
	explained: number;
	/** Engine guards: A at the cap, N_h or N_q below 3 (issue 12 §4). */
	warnings?: string[];
	parsimonious?: number | null;
}

export interface Figures {
	trainingCount: number;
	excludedCount: number;
	classes: { name: string; kind: 'genuine' | 'suspect'; n: number }[];
	models: ModelFigure[];
	/** Every library spectrum of the material (training, test, challenge) screened through this version: id → stats. */
	projections: Record<string, Projection>;
	/** Every library spectrum resampled onto every k-th point of the model axis (about 150 points), for overview plots. */
	overview: { axis: number[]; spectra: Record<string, number[]> };
	buildMs: number;
}

export interface Projection {
	role: string;
	label: string;
	verdict: string;
	profile: string | null;
	/** model name ('family' for stage 1) → distances */
	models: Record<string, { h: number; v: number; c: number; accepted: boolean; scores?: number[] }>;
}

export interface Validation {
	tested: number;
	testCount: number;
	challengeCount: number;
	/** engine's evaluate() result without the per-spectrum results: confusion K×(K+2), per-class metrics with Clopper–Pearson 95 % intervals */
	report: Omit<ValidationReport, 'results'> | null;
	verdicts: { entryId: number; label: string; role: string; verdict: string; profile: string | null; reason: string | null }[];
}

export interface MembershipRow {
	entryId: number;
	included: boolean;
	category: ExclusionCategory | null;
	reason: string | null;
	inclusionReason: string | null;
}
