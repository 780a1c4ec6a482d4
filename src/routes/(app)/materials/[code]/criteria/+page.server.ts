import { can } from '$lib/permissions';
import { fail } from '@sveltejs/kit';
import { ZodError } from 'zod';
import { requireUser } from '$lib/server/guard';
import { hasRole } from '$lib/server/services/actor';
import * as acceptance from '$lib/server/services/acceptance';
import { ServiceError } from '$lib/server/services/errors';
import * as materials from '$lib/server/services/materials';
import type { Actions, PageServerLoad } from './$types';

// The criteria a chemometrician may edit, in the order the page shows them (the API's field names).
const FIELDS = ['genuineTestMin', 'genuineTestLotsMin', 'perSuspectMin', 'challengeMin', 'specificityMin', 'sensitivityMin', 'cvFrrFactor', 'cvFrrQuantile', 'reviewMonths'] as const;

export const load = (async (event) => {
	const actor = requireUser(event, can.readModels);
	const material = await materials.get(event.params.code);
	const [effective, revisions] = await Promise.all([acceptance.effective(material.id), acceptance.list(material.id)]);
	const proposed = revisions.find((r) => r.state === 'proposed') ?? null;
	return {
		material: materials.toPublic(material),
		effective,
		revisions,
		proposed,
		fields: FIELDS,
		canPropose: hasRole(actor, can.buildModels) && !proposed,
		// QA decides; never the person who proposed (the service refuses it too)
		canDecide: hasRole(actor, can.approveModels) && !!proposed && proposed.proposedById !== actor.id,
		meanings: { approve: acceptance.CRITERIA_MEANING, refuse: acceptance.CRITERIA_REFUSAL_MEANING }
	};
}) satisfies PageServerLoad;

function failure(error: unknown, values: Record<string, string>, key: 'proposeError' | 'decideError') {
	if (error instanceof ServiceError) return fail(error.status === 403 || error.status === 409 || error.status === 401 ? error.status : 400, { [key]: { message: error.message, field: error.field ?? null, values } });
	if (error instanceof ZodError) {
		const issue = error.issues[0];
		return fail(400, { [key]: { message: issue?.message ?? 'Invalid input', field: String(issue?.path[0] ?? '') || null, values } });
	}
	throw error;
}

export const actions = {
	propose: async (event) => {
		const actor = requireUser(event, can.buildModels);
		const data = await event.request.formData();
		const values = Object.fromEntries([...FIELDS, 'reason'].map((k) => [k, String(data.get(k) ?? '').trim()]));
		try {
			// an empty field keeps the value that applies now
			const input = Object.fromEntries(Object.entries(values).filter(([, v]) => v !== ''));
			const created = await acceptance.propose(actor, event.params.code, input as never);
			return { proposed: { revision: created.revision } };
		} catch (error) {
			return failure(error, values, 'proposeError');
		}
	},
	decide: async (event) => {
		const actor = requireUser(event, can.approveModels);
		const data = await event.request.formData();
		const values = { decision: String(data.get('decision') ?? ''), reason: String(data.get('reason') ?? '') };
		try {
			const id = String(data.get('criteriaId') ?? '');
			if (!/^\d+$/.test(id)) throw new ServiceError(400, 'invalid', 'No proposed criteria named', 'criteriaId');
			if (values.decision !== 'approve' && values.decision !== 'refuse') throw new ServiceError(400, 'invalid', 'Choose approve or refuse', 'decision');
			const approveIt = values.decision === 'approve';
			const done = await acceptance.decide(actor, event.params.code, Number(id), approveIt, {
				password: String(data.get('password') ?? ''),
				meaning: approveIt ? acceptance.CRITERIA_MEANING : acceptance.CRITERIA_REFUSAL_MEANING,
				reason: values.reason
			});
			return { decided: { revision: done.revision, state: done.state } };
		} catch (error) {
			return failure(error, values, 'decideError');
		}
	}
} satisfies Actions;
