// Lots: statuses, identity words, the receipt schema and the stored plan and row.
import { z } from 'zod';
import { calendarDate } from '../../../validation/date';
import { nameText, proseText } from '../../../validation/text';
import { PLAN_KINDS, type PlanKind, type SamplingPlan } from '../../../analysis/sampling';

export type LotStatus = 'awaiting-scans' | 'screened' | 'released' | 'quarantined' | 'rejected';

export const LOT_STATUSES: LotStatus[] = ['awaiting-scans', 'screened', 'released', 'quarantined', 'rejected'];

export const STATUS_LABELS: Record<LotStatus, string> = {
	'awaiting-scans': 'awaiting scans',
	screened: 'screened, awaiting disposition',
	released: 'released',
	quarantined: 'quarantined',
	rejected: 'rejected'
};

export type Identity = 'meets' | 'fails' | 'not-screened' | null;

export const IDENTITY_LABELS: Record<Exclude<Identity, null>, string> = {
	meets: 'meets identity',
	fails: 'fails identity, quarantine recommended',
	'not-screened': 'not screened: no approved model'
};

/** Verdicts that count as a valid screening of a container (unusable and not-screened ask for another scan). */
export const VALID_VERDICTS = ['genuine', 'suspect', 'unknown', 'not-this-material'] as const;

export type ScanVerdict = (typeof VALID_VERDICTS)[number] | 'unusable' | 'not-screened';

const ref = z.union([z.number().int().positive(), nameText(z.string().trim().min(1, 'Choose one').max(60))]);

export const isoDate = calendarDate();

const planInput = z.preprocess(
	(v) => (v == null || v === '' ? { kind: 'every' } : typeof v === 'string' ? { kind: v } : v),
	z.object({
		kind: z.enum(PLAN_KINDS as [PlanKind, ...PlanKind[]], { errorMap: () => ({ message: 'Plan is every, n, p or r' }) }).default('every'),
		justification: proseText(z.string().trim().max(2000)).optional(),
		seed: z.coerce.number().int().min(0).max(4294967295).optional()
	})
);

export const lotSchema = z.object({
	material: ref,
	supplier: ref,
	supplierLot: nameText(z.string().trim().min(1, "Enter the supplier's lot number").max(80, 'At most 80 characters')),
	containers: z.coerce.number({ invalid_type_error: 'Enter the number of containers' }).int('A whole number of containers').min(1, 'At least 1 container').max(10000, 'At most 10000 containers'),
	receivedAt: isoDate,
	plan: planInput.optional(),
	/** Same as plan.justification, for forms that keep it beside the plan picker. */
	justification: proseText(z.string().trim().max(2000)).optional()
});

export type LotInput = z.input<typeof lotSchema>;

export interface StoredPlan extends Omit<SamplingPlan, 'sampled'> {
	label: string;
	justification: string | null;
	/** Material policy and supplier status at receipt: the facts the plan rests on. */
	policy: string;
	/** Replicate scans per container required at receipt (material's sampling policy; absent on lots received before it existed: 1). */
	replicates?: number;
	supplierStatus: string;
}

export interface LotRow {
	id: number;
	internal_lot: string;
	material_id: number;
	supplier_id: number;
	supplier_lot: string;
	containers: number;
	received_at: string;
	plan: StoredPlan;
	sampled: number[];
	status: LotStatus;
	identity: Identity;
	supplier_flag: string | null;
	created_by: number | null;
	created_at: Date;
}
