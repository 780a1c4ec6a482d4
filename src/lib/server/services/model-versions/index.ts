// Model versions of a material: build (as a pg-boss job), evidence figures, validation, exclusions and rebuilds, diffs,
// and QA approval with an electronic signature. Only the single approved version of a material screens lots.
// The public names of this service, one file per concern beside this index.
export { approvalSchema, approve } from './approval';
export { approvalView } from './approval-view';
export type { ApprovalView } from './approval-view';
export { buildBasis, createBuild, runBuild } from './build';
export type { BuildOptions } from './build';
export { diff } from './diff';
export { markExclusion, markInclusion, clearPending, rebuild } from './exclusions';
export { pageData } from './page';
export { draftsAwaiting, queueItems } from './queue';
export { reportExtras } from './report';
export type { ReportExtras } from './report';
export { resolve, get, listForMaterial, artefactText, approvedFor, memberships } from './read';
export type { PublicVersion } from './read';
export { APPROVAL_MEANING, EXCLUSION_CATEGORIES, EXCLUSION_LABELS, GROUPINGS, MIN_PER_CLASS, minimumFor, buildParamsSchema } from './schema';
export type { ExclusionCategory, BuildParams, BuildParamsInput, ExclusionInput } from './schema';
export type { VersionState, Progress, ModelFigure, Figures, Projection, Validation, MembershipRow } from './types';
