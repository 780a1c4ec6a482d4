import { can } from '$lib/permissions';
import { json } from '@sveltejs/kit';
import { apiError, handler, requireActor } from '$lib/server/api';
import { ServiceError } from '$lib/server/services/errors';
import * as spectra from '$lib/server/services/spectra';
import type { RequestHandler } from './$types';

/** Loose uploads (the intake page), newest first: ?page, pageSize, sort (id|file|format|points|instrument|uploader|created[:asc|desc]), q. */
export const GET: RequestHandler = handler(async (event) => {
	const actor = requireActor(event, can.readSpectra);
	const q = event.url.searchParams;
	return json(
		await spectra.list(actor, {
			page: Number(q.get('page') ?? 1) || 1,
			pageSize: Number(q.get('pageSize') ?? 25) || 25,
			sort: q.get('sort') ?? undefined,
			q: q.get('q') ?? undefined
		})
	);
});

const itemJson = (item: spectra.BatchItem) => {
	if (!item.ok) return { file: item.file, error: item.error };
	const [first] = item.spectra;
	return {
		file: item.file,
		id: first.id,
		sha256: first.sha256,
		points: first.points,
		axis: first.axis,
		format: first.format,
		// A CSV matrix holds several spectra: each gets its own id.
		...(item.spectra.length > 1 ? { spectra: item.spectra.map((s) => ({ id: s.id, rowIndex: s.rowIndex, sourceId: s.sourceId, points: s.points, axis: s.axis })) } : {})
	};
};

/**
 * multipart/form-data: `file` (one or many JCAMP-DX / CSV files), optional `instrument` (id or name) and `allowGaps=true`.
 * A session (technician, chemometrician, admin) or `Authorization: Bearer <instrument token>`.
 * 201 with one entry per file, stored or refused; when every file is refused, their shared status (400/409/413/415).
 */
export const POST: RequestHandler = handler(async (event) => {
	const actor = event.locals.actor?.instrumentId != null ? event.locals.actor : requireActor(event, can.uploadSpectra);
	const type = event.request.headers.get('content-type') ?? '';
	if (!type.toLowerCase().startsWith('multipart/form-data')) {
		return apiError(415, 'not-multipart', 'Send the spectra as multipart/form-data with one or more `file` fields');
	}
	const length = Number(event.request.headers.get('content-length') ?? 0);
	if (length > spectra.maxBatchBytes()) {
		return apiError(413, 'too-large', `The upload is ${(length / 1048576).toFixed(1)} MB; one request may carry at most ${spectra.maxBatchBytes() / 1048576} MB`);
	}
	let form: FormData;
	try {
		form = await event.request.formData();
	} catch (e) {
		// adapter-node refuses a body over BODY_SIZE_LIMIT while it streams in.
		if (e instanceof Error && /exceeds limit|too large/i.test(e.message)) return apiError(413, 'too-large', 'The upload is larger than this server accepts');
		return apiError(400, 'bad-multipart', 'The multipart body could not be read');
	}
	const files = form.getAll('file').filter((f): f is File => typeof f === 'object' && f !== null && 'arrayBuffer' in f);
	if (!files.length) throw new ServiceError(400, 'no-file', 'The field "file" with one or more spectrum files is missing', 'file');
	const instrument = form.get('instrument');
	const allowGaps = form.get('allowGaps');
	const items = await spectra.ingestBatch(
		actor,
		files.map((f) => ({ name: f.name || 'upload', size: f.size, read: async () => new Uint8Array(await f.arrayBuffer()) })),
		{ instrument: typeof instrument === 'string' && instrument.trim() ? instrument.trim() : null, allowGaps: allowGaps === 'true' || allowGaps === '1' }
	);
	const stored = items.filter((i) => i.ok).length;
	const body = { stored, refused: items.length - stored, files: items.map(itemJson) };
	if (stored > 0) return json(body, { status: 201 });
	const failed = items.filter((i): i is Extract<spectra.BatchItem, { ok: false }> => !i.ok);
	const statuses = new Set(failed.map((i) => i.status));
	const status = statuses.size === 1 ? failed[0].status : 400;
	const error = failed.length === 1 ? failed[0].error : { code: 'all-refused', message: `None of the ${failed.length} files was stored; see each file's error` };
	return json({ error, ...body }, { status });
});
