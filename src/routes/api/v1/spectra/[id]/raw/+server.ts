import { can } from '$lib/permissions';
import { handler, requireActor } from '$lib/server/api';
import * as spectra from '$lib/server/services/spectra';
import type { RequestHandler } from './$types';
import { contentDisposition } from '$lib/validation/text';

/** The exact uploaded bytes, with the original file name; the SHA-256 lets the receiver check them. */
export const GET: RequestHandler = handler(async (event) => {
	const actor = requireActor(event, can.readSpectra);
	const file = await spectra.raw(actor, event.params.id);
	return new Response(new Uint8Array(file.bytes.buffer as ArrayBuffer, file.bytes.byteOffset, file.bytes.byteLength), {
		headers: {
			'content-type': 'application/octet-stream',
			'content-length': String(file.bytes.byteLength),
			'content-disposition': contentDisposition('attachment', file.fileName),
			'x-content-sha256': file.sha256,
			etag: `"${file.sha256}"`,
			'cache-control': 'private, max-age=0'
		}
	});
});
