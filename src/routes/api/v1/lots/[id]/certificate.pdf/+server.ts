import { handler, requireActor } from '$lib/server/api';
import * as dispositions from '$lib/server/services/dispositions';
import type { RequestHandler } from './$types';

/** The stored certificate of the lot's effective disposition, or of `?disposition=<id>` (also a superseded one). */
export const GET: RequestHandler = handler(async (event) => {
	requireActor(event);
	const which = event.url.searchParams.get('disposition');
	const cert = await dispositions.certificate(event.params.id, which ? Number(which) : undefined);
	return new Response(new Uint8Array(cert.pdf), {
		headers: {
			'content-type': 'application/pdf',
			'content-disposition': `${event.url.searchParams.has('download') ? 'attachment' : 'inline'}; filename="${cert.internalLot}-certificate-${cert.dispositionId}.pdf"`,
			'x-content-sha256': cert.sha256,
			'cache-control': 'private, no-store'
		}
	});
});
