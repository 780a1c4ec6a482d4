import { ANY_SIGNED_IN, can } from '$lib/permissions';
import { json } from '@sveltejs/kit';
import { handler, requireActor } from '$lib/server/api';
import { invalid, ServiceError } from '$lib/server/services/errors';
import * as lots from '$lib/server/services/lots';
import * as scans from '$lib/server/services/scans';
import { maxFileBytes, maxSingleUploadBytes, uploadTooLargeMessage } from '$lib/server/upload-limits';
import { readMultipart } from '$lib/server/multipart';
import type { RequestHandler } from './$types';

/** Every scan of the lot, with verdict and statistics (the same list GET /api/v1/lots/{id} holds). */
export const GET: RequestHandler = handler(async (event) => {
	requireActor(event, ANY_SIGNED_IN);
	const lot = await lots.get(event.params.id);
	return json({ lotId: lot.id, internalLot: lot.internalLot, scans: lot.scans });
});

/**
 * multipart/form-data: `file` (JCAMP-DX or CSV) and `container` (1..N, in the plan); optional `instrumentId` for a session,
 * `headerConfirmation` (why the file's header names another lot or container) and, for an admin only,
 * `duplicateOverrideReason` (a documented case for bytes already stored elsewhere). 409 `header-mismatch` /
 * `duplicate-elsewhere` answers carry `confirm: { field, label, minLength }` when a confirmation can be given.
 * `Authorization: Bearer <instrument token>` or a technician/admin session. 201 with the verdict and the lot's status.
 */
export const POST: RequestHandler = handler(async (event) => {
	const actor = event.locals.actor?.instrumentId != null ? event.locals.actor : requireActor(event, can.uploadScans);
	if (!actor) throw new ServiceError(401, 'unauthenticated', 'Sign in, or send an instrument token');
	const type = event.request.headers.get('content-type') ?? '';
	if (!type.toLowerCase().startsWith('multipart/form-data')) throw new ServiceError(415, 'unsupported-media-type', 'Send multipart/form-data with the fields file and container');
	const length = Number(event.request.headers.get('content-length') ?? 0);
	if (length > maxSingleUploadBytes()) throw new ServiceError(413, 'too-large', uploadTooLargeMessage());
	// Streamed: the file limit applies while the bytes arrive, and the file is hashed on the way in.
	const form = await readMultipart(event.request, { fileBytes: maxFileBytes(), files: 1 });
	const file = form.files.find((f) => f.field === 'file');
	if (!file) throw invalid('The field "file" with a spectrum file is missing', 'file');
	const container = form.field('container');
	if (container == null || container === '') throw invalid('The field "container" (the container number) is missing', 'container');
	const instrument = form.field('instrumentId');
	const added = await scans.add(actor, event.params.id, {
		bytes: file.bytes,
		sha256: file.sha256,
		fileName: file.name,
		container,
		instrumentId: instrument ? Number(instrument) : null,
		duplicateOverrideReason: form.field('duplicateOverrideReason') || null,
		headerConfirmation: form.field('headerConfirmation') || null
	});
	return json(added, { status: 201 });
});
