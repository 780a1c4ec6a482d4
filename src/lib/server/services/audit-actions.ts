// Every audit action a service may record, as one list: `audit.record` takes an AuditAction, so the compiler refuses
// a misspelt or unlisted action. A new kind of event is one line here (keep the entity prefix and the past tense).
// Stored rows are read back as plain strings: the chain also holds actions written before this list existed.
export const AUDIT_ACTIONS = [
	'acceptance.approved',
	'acceptance.proposed',
	'acceptance.refused',

	'alert.acknowledged',
	'alert.closed',
	'alert.finding-added',
	'alert.finding-invalidated',
	'alert.opened',
	'alert.raised',

	'certificate.generated',

	'drift.baseline-restarted',
	'drift.signal',

	'instrument.check-plan-changed',
	'instrument.check-recorded',
	'instrument.created',
	'instrument.ordinate-ceiling-changed',
	'instrument.token-created',
	'instrument.token-revoked',
	'instrument.updated',

	'library.growth-proposed',
	'library.spectra-added',

	'lot.disposition-awaiting-second-signature',
	'lot.dispositioned',
	'lot.received',
	'lot.rescreened',
	'lot.scan-added',
	'lot.scan-invalidation-approved',
	'lot.scan-invalidation-proposed',
	'lot.scan-invalidation-refused',
	'lot.status-changed',

	'mail.queued',

	'material.axis-changed',
	'material.axis-declared',
	'material.class-added',
	'material.created',
	'material.quality-gates-changed',
	'material.replicates-changed',
	'material.require-instrument-changed',

	'model.approved',
	'model.build-failed',
	'model.build-requested',
	'model.built',
	'model.exclusion-marked',
	'model.pending-cleared',
	'model.rebuild-requested',
	'model.reinclusion-marked',
	'model.retired',
	'model.revalidation-triggered',
	'model.reviewed',
	'model.transfer-approved',
	'model.transfer-checked',
	'model.transfer-refused',

	'signature.applied',

	'spectrum.stored',

	'supplier.created',
	'supplier.status-change-declined',
	'supplier.status-change-requested',
	'supplier.status-changed',
	'supplier.updated',

	'user.created',
	'user.deactivated',
	'user.locked',
	'user.password-changed',
	'user.password-reset',
	'user.reactivated',
	'user.role-change-declined',
	'user.role-change-requested',
	'user.roles-changed',
	'user.sign-in-failed',
	'user.signature-failed',
	'user.signed-in',
	'user.signed-out'
] as const;

export type AuditAction = (typeof AUDIT_ACTIONS)[number];
