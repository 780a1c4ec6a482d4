import { can } from '$lib/permissions';
import { json } from '@sveltejs/kit';
import { apiError, handler, requireActor } from '$lib/server/api';
import { ServiceError } from '$lib/server/services/errors';
import * as spectra from '$lib/server/services/spectra';
import { readMultipart } from '$lib/server/multipart';
import { batchTooLargeMessage, maxBatchBytes, maxBatchFiles, maxFileBytes, streamedTooLargeMessage } from '$lib/server/upload-limits';
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
	if (length > maxBatchBytes()) return apiError(413, 'too-large', batchTooLargeMessage(length));
	// Streamed: per-file and file-count limits apply while the bytes arrive; each file is hashed on the way in.
	const form = await readMultipart(event.request, { fileBytes: maxFileBytes(), files: maxBatchFiles(), oversize: 'mark' });
	const files = form.files.filter((f) => f.field === 'file');
	if (!files.length) throw new ServiceError(400, 'no-file', 'The field "file" with one or more spectrum files is missing', 'file');
	const instrument = form.field('instrument');
	const allowGaps = form.field('allowGaps');
	const items = await spectra.ingestBatch(
		actor,
		files.map((f) => ({
			name: f.name,
			size: f.size,
			sha256: f.sha256,
			read: () => {
				if (f.tooLarge) throw new spectra.IntakeError(413, 'too-large', streamedTooLargeMessage(f.name, maxFileBytes()), f.name);
				return f.bytes;
			}
		})),
		{ instrument: instrument?.trim() ? instrument.trim() : null, allowGaps: allowGaps === 'true' || allowGaps === '1' }
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
