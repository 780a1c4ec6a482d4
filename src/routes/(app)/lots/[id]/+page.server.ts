import { can } from '$lib/permissions';
import { fail } from '@sveltejs/kit';
import { requireUser } from '$lib/server/guard';
import { hasRole } from '$lib/server/services/actor';
import { ServiceError } from '$lib/server/services/errors';
import * as drift from '$lib/server/services/drift';
import * as instruments from '$lib/server/services/instruments';
import * as scans from '$lib/server/services/scans';
import { SCREENING_CAUTION } from '$lib/caution';
import { lotPageData } from '$lib/server/services/lot-evidence';
import { cosignAction, disposeAction, dispositionPanelData } from './disposition.server';
import { decideAction, invalidationPageData, proposeAction } from './invalidation.server';
import type { Actions, PageServerLoad } from './$types';

export const load = (async (event) => {
	const actor = requireUser(event);
	const { lot, evidence } = await lotPageData(event.params.id);
	return {
		lot,
		evidence,
		caution: SCREENING_CAUTION,
		canScan: hasRole(actor, can.uploadScans) && !lot.closed,
		instruments: (await instruments.list()).filter((i) => i.active).map((i) => ({ id: i.id, name: i.name, technique: i.technique })),
		disposition: await dispositionPanelData(actor, lot),
		invalidation: { ...invalidationPageData(actor), open: !lot.closed },
		driftSignal: await drift.forLot(lot.id)
	};
}) satisfies PageServerLoad;

export const actions = {
	/** QA disposition with an electronic signature, and the second signature of a release despite failed identity. */
	dispose: (event) => disposeAction(event),
	cosign: (event) => cosignAction(event),
	/** Invalidation of one scan's result: proposed by a technician/chemometrician, decided by another person in QA with a signature. */
	proposeInvalidation: (event) => proposeAction(event),
	approveInvalidation: (event) => decideAction(event, 'approve'),
	refuseInvalidation: (event) => decideAction(event, 'refuse'),
	/** One file for one container: the form path that works without JavaScript. */
	scan: async (event) => {
		const actor = requireUser(event, can.uploadScans);
		const form = await event.request.formData();
		const file = form.get('file');
		const container = String(form.get('container') ?? '');
		const instrument = String(form.get('instrumentId') ?? '');
		if (!(file instanceof File) || file.size === 0) return fail(400, { scanError: 'Choose a spectrum file', field: 'file' });
		try {
			const added = await scans.add(actor, event.params.id, {
				bytes: new Uint8Array(await file.arrayBuffer()),
				fileName: file.name,
				container,
				instrumentId: instrument ? Number(instrument) : null,
				duplicateOverrideReason: String(form.get('duplicateOverrideReason') ?? '') || null,
				headerConfirmation: String(form.get('headerConfirmation') ?? '') || null
			});
			return { scanAdded: { container: added.container, verdict: added.verdict, profile: added.profile, reason: added.reason, fileName: added.fileName } };
		} catch (error) {
			if (error instanceof ServiceError) return fail(error.status === 409 ? 409 : 400, { scanError: error.message, field: error.field ?? 'file' });
			throw error;
		}
	},
	rescreen: async (event) => {
		const actor = requireUser(event, can.uploadScans);
		try {
			const done = await scans.rescreen(actor, event.params.id);
			return { rescreened: done.scans.length };
		} catch (error) {
			if (error instanceof ServiceError) return fail(error.status === 409 ? 409 : 400, { scanError: error.message, field: 'rescreen' });
			throw error;
		}
	}
} satisfies Actions;
