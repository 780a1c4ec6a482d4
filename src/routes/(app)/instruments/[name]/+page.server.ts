import { error, fail } from '@sveltejs/kit';
import { can } from '$lib/permissions';
import { requireUser } from '$lib/server/guard';
import { hasRole } from '$lib/server/services/actor';
import { ServiceError } from '$lib/server/services/errors';
import * as checks from '$lib/server/services/instrument-checks';
import type { Actions, PageServerLoad } from './$types';

export const load = (async (event) => {
	const actor = requireUser(event, can.read);
	const d = await checks.detail(event.params.name).catch((e) => {
		if (e instanceof ServiceError && e.status === 404) error(404, e.message);
		throw e;
	});
	return { ...d, canRecord: hasRole(actor, can.recordInstrumentChecks), canEditPlan: hasRole(actor, can.administer) };
}) satisfies PageServerLoad;

export const actions = {
	record: async (event) => {
		const actor = requireUser(event, can.recordInstrumentChecks);
		const form = await event.request.formData();
		const kind = String(form.get('kind') ?? '');
		const file = form.get('file');
		const readings = String(form.get('readings') ?? '');
		try {
			const bytes = file instanceof File && file.size ? new Uint8Array(await file.arrayBuffer()) : null;
			const r = await checks.record(actor, event.params.name, { kind: kind as 'wavelength', readings }, bytes ? { bytes, fileName: (file as File).name } : null);
			return { recorded: { kind: r.kind, passed: r.passed, summary: r.summary } };
		} catch (e) {
			if (e instanceof ServiceError) return fail(e.status === 403 ? 403 : 400, { checkError: e.message, field: e.field ?? 'file' });
			if (e instanceof Error && e.name === 'ZodError') return fail(400, { checkError: 'Choose wavelength, linearity or noise', field: 'kind' });
			throw e;
		}
	},
	plan: async (event) => {
		const actor = requireUser(event, can.administer);
		const form = await event.request.formData();
		let plan: unknown;
		try {
			plan = JSON.parse(String(form.get('plan') ?? ''));
		} catch {
			return fail(400, { planError: 'The plan is not valid JSON' });
		}
		try {
			await checks.updatePlan(actor, event.params.name, plan, String(form.get('reason') ?? ''));
			return { planSaved: true };
		} catch (e) {
			if (e instanceof ServiceError) return fail(e.status === 403 ? 403 : 400, { planError: e.message });
			throw e;
		}
	}
} satisfies Actions;
