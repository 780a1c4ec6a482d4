// Model versions: the stored row and the figures, projections and validation kept with it.
import { type ModelArtefact } from '../../../analysis';
import * as acceptance from '../acceptance';
import type { Figures, Validation } from '../../../analysis/model-evidence';
export type { ModelFigure, Figures, Projection, Validation } from '../../../analysis/model-evidence';
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





export interface MembershipRow {
	entryId: number;
	included: boolean;
	category: ExclusionCategory | null;
	reason: string | null;
	inclusionReason: string | null;
}
