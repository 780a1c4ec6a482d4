import { can } from '$lib/permissions';
import { json } from '@sveltejs/kit';
import { handler, readJson, requireActor } from '$lib/server/api';
import * as modelReviews from '$lib/server/services/model-reviews';
import * as versions from '$lib/server/services/model-versions';
import type { RequestHandler } from './$types';

/** The version's review state (review-by date, overdue or due soon), its revalidation triggers and its periodic reviews, newest first. */
export const GET: RequestHandler = handler(async (event) => {
	requireActor(event, can.readModels);
	const v = await versions.get(event.params.id);
	return json({ reviewBy: v.reviewBy, review: v.review, revalidation: v.revalidation, reviews: await modelReviews.forVersion(v.id) });
});

/**
 * { outcome: "fit-for-use" | "revalidate", reason, password, meaning?: "periodic review recorded" }: a chemometrician or
 * QA manager records the periodic review of an approved version with an electronic signature; 201 with the review
 * (fit-for-use sets the next review-by date; revalidate keeps it).
 */
export const POST: RequestHandler = handler(async (event) => {
	const actor = requireActor(event, can.reviewModels);
	const body = await readJson(event.request);
	const result = await modelReviews.record(actor, await versions.resolve(event.params.id), {
		outcome: body.outcome as modelReviews.ReviewOutcome,
		reason: String(body.reason ?? ''),
		password: String(body.password ?? ''),
		meaning: body.meaning == null ? undefined : String(body.meaning)
	});
	return json(result, { status: 201 });
});
