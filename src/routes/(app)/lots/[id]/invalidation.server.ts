// The lot page's invalidation actions (?/proposeInvalidation, ?/approveInvalidation, ?/refuseInvalidation): read the
// form, call the invalidation service, and put any refusal beside the scan's form.
import { can } from '$lib/permissions';
import { fail, type RequestEvent } from '@sveltejs/kit';
import { requireUser } from '$lib/server/guard';
import { hasRole, type Actor } from '$lib/server/services/actor';
import { ServiceError } from '$lib/server/services/errors';
import * as invalidations from '$lib/server/services/invalidations';

export function invalidationPageData(actor: Actor) {
	return {
		causes: invalidations.INVALIDATION_CAUSES.map((c) => ({ value: c, label: invalidations.CAUSE_LABELS[c] })),
		approveMeanings: invalidations.APPROVE_MEANINGS,
		refuseMeanings: invalidations.REFUSE_MEANINGS,
		canPropose: hasRole(actor, can.proposeInvalidation),
		canDecide: hasRole(actor, can.decideInvalidation),
		actorId: actor.id
	};
}

function refusal(scanId: string, error: unknown, values: Record<string, string>) {
	if (error instanceof ServiceError) {
		const status = ([401, 403, 404, 409, 423, 429] as number[]).includes(error.status) ? error.status : 400;
		return fail(status, { invalidation: { scanId, error: error.message, field: error.field ?? null, values } });
	}
	throw error;
}

export async function proposeAction(event: RequestEvent<{ id: string }>) {
	const actor = requireUser(event, can.proposeInvalidation);
	const form = await event.request.formData();
	const scanId = String(form.get('scanId') ?? '');
	const cause = String(form.get('cause') ?? '');
	const description = String(form.get('description') ?? '');
	try {
		const v = await invalidations.propose(actor, event.params.id, scanId, { cause: cause as invalidations.InvalidationCause, description });
		return { invalidationDone: { scanId, message: `Invalidation of scan #${scanId} proposed: a QA manager other than you decides it. Until then the result counts.`, id: v.id } };
	} catch (error) {
		return refusal(scanId, error, { cause, description });
	}
}

export async function decideAction(event: RequestEvent<{ id: string }>, decision: 'approve' | 'refuse') {
	const actor = requireUser(event, can.decideInvalidation);
	const form = await event.request.formData();
	const scanId = String(form.get('scanId') ?? '');
	const input = { password: String(form.get('password') ?? ''), meaning: String(form.get('meaning') ?? ''), reason: String(form.get('reason') ?? '') };
	try {
		const out = await invalidations.decide(actor, event.params.id, scanId, decision, input);
		return {
			invalidationDone: {
				scanId,
				message: decision === 'approve' ? `Invalidation of scan #${scanId} approved and signed: the scan no longer counts.` : `Invalidation of scan #${scanId} refused and signed: the result stands.`,
				id: out.invalidation.id
			}
		};
	} catch (error) {
		return refusal(scanId, error, { meaning: input.meaning, reason: input.reason });
	}
}
