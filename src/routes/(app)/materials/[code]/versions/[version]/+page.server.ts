import { can } from '$lib/permissions';
import { fail, redirect } from '@sveltejs/kit';
import { message, superValidate } from 'sveltekit-superforms';
import { zod } from 'sveltekit-superforms/adapters';
import { z } from 'zod';
import { proseText } from '$lib/validation/text';
import { chooseOne } from '$lib/server/forms';
import { requireUser } from '$lib/server/guard';
import { hasRole } from '$lib/server/services/actor';
import * as versions from '$lib/server/services/model-versions';
import * as transfers from '$lib/server/services/transfers';
import * as modelReviews from '$lib/server/services/model-reviews';
import { ServiceError } from '$lib/server/services/errors';
import { refuse } from '../../../service-errors.server';
import { versionIdFor } from './version.server';
import { versionView } from './view.server';
import type { Actions, PageServerLoad } from './$types';

// A comma-separated list in one hidden field (the page's brushing selection); turned into numbers in the action.
const ids = z
	.string()
	.trim()
	.default('')
	.refine((s) => s !== '', 'Select spectra in a plot or the table first')
	.refine((s) => /^\d+(\s*,\s*\d+)*$/.test(s), 'The selection must be a list of spectrum numbers');
const idList = (s: string) => s.split(',').map((x) => Number(x.trim()));
const excludeSchema = z.object({
	entryIds: ids,
	// Never pre-set: the person excluding chooses the category.
	category: chooseOne(versions.EXCLUSION_CATEGORIES, 'Choose a reason category'),
	reason: proseText(z.string().trim().min(3, 'Write why these spectra are excluded').max(2000))
});
const includeSchema = z.object({ entryIds: ids, reason: proseText(z.string().trim().min(3, 'Write why these spectra come back').max(2000)) });
const rebuildSchema = z.object({ note: proseText(z.string().trim().max(2000)).default('') });

export const load = (async (event) => {
	const actor = requireUser(event);
	const id = await versionIdFor(event.params);
	const view = await versionView(id, event.url.searchParams);
	const instruments = await transfers.forVersion(id);
	return {
		...view,
		// issue 14 §3: the instruments this version screens (home and approved transfers), and training spectra without one
		instruments: { approvedFor: instruments.approvedFor, unstated: instruments.home.unstated, pending: instruments.transfers.filter((t) => t.state === 'proposed').length },
		reviews: await modelReviews.forVersion(id),
		canReview: hasRole(actor, can.reviewModels) && view.version.state === 'approved',
		reviewMeaning: modelReviews.REVIEW_MEANING,
		outcomes: modelReviews.REVIEW_OUTCOMES.map((o) => ({ value: o, label: modelReviews.OUTCOME_LABELS[o] })),
		canEdit: hasRole(actor, can.buildModels),
		canApprove: hasRole(actor, can.approveModels) && view.version.builtBy.id !== actor.id,
		isBuilder: view.version.builtBy.id === actor.id,
		excludeForm: await superValidate(zod(excludeSchema), { id: 'exclude' }),
		includeForm: await superValidate(zod(includeSchema), { id: 'include' }),
		rebuildForm: await superValidate(zod(rebuildSchema), { id: 'rebuild' }),
		categories: versions.EXCLUSION_CATEGORIES.map((c) => ({ value: c, label: versions.EXCLUSION_LABELS[c] }))
	};
}) satisfies PageServerLoad;

export const actions = {
	exclude: async (event) => {
		const actor = requireUser(event, can.buildModels);
		const form = await superValidate(event.request, zod(excludeSchema), { id: 'exclude' });
		if (!form.valid) return fail(400, { excludeForm: form });
		try {
			const pending = await versions.markExclusion(actor, await versionIdFor(event.params), { ...form.data, category: form.data.category as versions.ExclusionCategory, entryIds: idList(form.data.entryIds) });
			return message(form, `Marked ${idList(form.data.entryIds).length} for exclusion; ${pending.exclude.length} pending. Rebuild to apply.`);
		} catch (error) {
			return refuse(form, error, 'excludeForm');
		}
	},
	include: async (event) => {
		const actor = requireUser(event, can.buildModels);
		const form = await superValidate(event.request, zod(includeSchema), { id: 'include' });
		if (!form.valid) return fail(400, { includeForm: form });
		try {
			const pending = await versions.markInclusion(actor, await versionIdFor(event.params), { ...form.data, entryIds: idList(form.data.entryIds) });
			return message(form, `Marked ${idList(form.data.entryIds).length} for re-inclusion; ${pending.include.length} pending. Rebuild to apply.`);
		} catch (error) {
			return refuse(form, error, 'includeForm');
		}
	},
	clear: async (event) => {
		const actor = requireUser(event, can.buildModels);
		await versions.clearPending(actor, await versionIdFor(event.params));
		return { cleared: true };
	},
	review: async (event) => {
		const actor = requireUser(event, can.reviewModels);
		const data = await event.request.formData();
		const field = (name: string) => String(data.get(name) ?? '');
		try {
			const done = await modelReviews.record(actor, await versionIdFor(event.params), {
				outcome: field('outcome') as modelReviews.ReviewOutcome,
				reason: field('reason'),
				password: field('password'),
				meaning: field('meaning')
			});
			return { reviewDone: { outcome: done.outcome, reviewBy: done.reviewByAfter } };
		} catch (error) {
			if (error instanceof ServiceError) return fail(error.status === 403 ? 403 : 400, { reviewError: { message: error.message, field: error.field ?? null, outcome: field('outcome'), reason: field('reason') } });
			throw error;
		}
	},
	rebuild: async (event) => {
		const actor = requireUser(event, can.buildModels);
		const form = await superValidate(event.request, zod(rebuildSchema), { id: 'rebuild' });
		if (!form.valid) return fail(400, { rebuildForm: form });
		let created: number;
		try {
			created = (await versions.rebuild(actor, await versionIdFor(event.params), {}, { note: form.data.note || undefined })).id;
		} catch (error) {
			return refuse(form, error, 'rebuildForm');
		}
		const v = await versions.get(created);
		redirect(303, `/materials/${event.params.code}/versions/${v.version}`);
	}
} satisfies Actions;
