// Lots: receiving a delivery (internal lot number, sampling plan, supplier flag), listing, and the lot record with
// its containers, scans and screening outcome. Scans and the lot status live in scans.ts.
// The public names of this service, one file per concern beside this index.
export { list, awaiting } from './list';
export type { LotQuery, LotListRow } from './list';
export { isClosed, supplierFlagText, outcomeOf } from './outcome';
export { lotRow, resolve, get } from './read';
export type { LotView } from './read';
export { create } from './receive';
export { LOT_STATUSES, STATUS_LABELS, IDENTITY_LABELS, VALID_VERDICTS, lotSchema } from './schema';
export type { LotStatus, Identity, ScanVerdict, LotInput, StoredPlan } from './schema';
export type { ModelStatsView, LevelView, ScanView, ContainerView } from './view';
export { reducedPlanRefusal } from './receive';
