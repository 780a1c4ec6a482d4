// The lot page's disposition slot: what DispositionPanel.svelte shows, and its two named actions (?/dispose, ?/cosign).
import { can } from '$lib/permissions';
import { fail, type RequestEvent } from '@sveltejs/kit';
import { message, superValidate, type SuperValidated } from 'sveltekit-superforms';
import { zod } from 'sveltekit-superforms/adapters';
import { z } from 'zod';
import { DEFAULT_TIME_ZONE } from '$lib/signature-time';
import { chooseOne } from '$lib/server/forms';
import { requireUser } from '$lib/server/guard';
import * as mail from '$lib/server/mail';
import { hasRole, type Actor } from '$lib/server/services/actor';
import * as dispositions from '$lib/server/services/dispositions';
import { ServiceError } from '$lib/server/services/errors';
import * as lots from '$lib/server/services/lots';
import type { LotView } from '$lib/server/services/lots';
import { config } from '$lib/server/config';

// The signer chooses the decision and the meaning: the form starts with neither selected (a signed form has no default).
const CHOOSE_DECISION = 'Choose release, quarantine or reject';
export const disposeFormSchema = dispositions.dispositionSchema.extend({
	decision: chooseOne(['release', 'quarantine', 'reject'], CHOOSE_DECISION),
	meaning: z.string().trim().default('').pipe(z.string().min(3, 'Choose what your signature means').max(200))
});
export const cosignFormSchema = dispositions.cosignSchema.extend({
	dispositionId: z.coerce.number().int().positive(),
	meaning: z.string().trim().default('').pipe(z.string().min(3, 'Choose what your signature means').max(200))
});

export async function dispositionPanelData(actor: Actor, lot: LotView) {
	const history = await dispositions.forLot(lot.id);
	const pending = history.find((d) => d.state === 'awaiting-second-signature') ?? null;
	const effective = history.find((d) => d.state === 'effective') ?? null;
	const disposeForm = await superValidate(zod(disposeFormSchema), { id: 'dispose' });
	const cosignForm = await superValidate(zod(cosignFormSchema), { id: 'cosign' });
	if (pending) cosignForm.data.dispositionId = pending.id;
	const isQa = hasRole(actor, can.signDispositions);
	const complete = lot.identity === 'meets' || lot.identity === 'fails';
	// The first signer of a pending release waits for another QA user: they get no second form to sign again.
	const waitingForOther = !!pending && pending.signatures[0]?.signerId === actor.id;
	return {
		history,
		pending,
		effective,
		mail: (await mail.forLot(lot.id)).filter((m) => m.kind === 'certificate'),
		timeZone: config().LOTGATE_TIME_ZONE || DEFAULT_TIME_ZONE,
		complete,
		identity: lot.identity,
		canDispose: isQa && !waitingForOther,
		waitingForOther,
		/** Why the current user cannot give the second signature, or null when they can. */
		cosignBlock: !pending ? null : !isQa ? 'Only a QA manager can give the second signature.' : pending.signatures[0]?.signerId === actor.id ? 'You gave the first signature. This release is waiting for a second signature by another QA user; you cannot sign it again.' : null,
		meanings: dispositions.MEANINGS,
		cosignMeanings: dispositions.COSIGN_MEANINGS,
		disposeForm,
		cosignForm
	};
}
export type DispositionPanelData = Awaited<ReturnType<typeof dispositionPanelData>>;

// eslint-disable-next-line @typescript-eslint/no-explicit-any
function refuse(form: SuperValidated<any, any>, error: unknown) {
	form.data.password = '';
	if (error instanceof ServiceError) {
		const status = ([401, 403, 409, 423, 429] as number[]).includes(error.status) ? error.status : 400;
		if (error.field && error.field in form.data) {
			(form.errors as Record<string, string[]>)[error.field] = [error.message];
			return fail(status, { form });
		}
		return message(form, error.message, { status: status as 400 });
	}
	throw error;
}

export async function disposeAction(event: RequestEvent<{ id: string }>) {
	const actor = requireUser(event, can.signDispositions);
	const form = await superValidate(event.request, zod(disposeFormSchema), { id: 'dispose' });
	if (!form.valid) {
		form.data.password = '';
		return fail(400, { form });
	}
	try {
		const out = await dispositions.dispose(actor, event.params.id, { ...form.data, decision: form.data.decision as dispositions.Decision });
		form.data.password = '';
		form.data.reason = '';
		return message(form, out.message);
	} catch (error) {
		return refuse(form, error);
	}
}

export async function cosignAction(event: RequestEvent<{ id: string }>) {
	const actor = requireUser(event, can.signDispositions);
	const form = await superValidate(event.request, zod(cosignFormSchema), { id: 'cosign' });
	if (!form.valid) {
		form.data.password = '';
		return fail(400, { form });
	}
	try {
		// The lot page is reached by id or by internal lot number (the home queue links by number).
		const lotId = await lots.resolve(event.params.id);
		const out = await dispositions.cosign(actor, form.data.dispositionId, form.data, lotId);
		form.data.password = '';
		form.data.reason = '';
		return message(form, out.message);
	} catch (error) {
		return refuse(form, error);
	}
}
