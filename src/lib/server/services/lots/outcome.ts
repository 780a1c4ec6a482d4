// Lots: the supplier flag text; closed or open and the outcome in the lot header are pure (analysis/lot-outcome.ts).
export { isClosed, outcomeOf } from '../../../analysis/lot-outcome';

export function supplierFlagText(flag: string | null, supplierCode: string) {
	if (flag === 'blocked') return `Supplier ${supplierCode} is blocked: hold the delivery in quarantine and inform procurement and QA.`;
	if (flag === 'on-watch') return `Supplier ${supplierCode} is on watch: screen with care; QA reviews this lot closely.`;
	return null;
}
