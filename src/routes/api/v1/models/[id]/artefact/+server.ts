import { can } from '$lib/permissions';
import { handler, requireActor } from '$lib/server/api';
import * as versions from '$lib/server/services/model-versions';
import type { RequestHandler } from './$types';

/** Exactly the JSON `npx lotgate screen --model FILE` reads, byte for byte (its sha256 is the version's artefactSha256). */
export const GET: RequestHandler = handler(async (event) => {
	requireActor(event, can.readModels);
	const { text, sha256, label } = await versions.artefactText(event.params.id);
	return new Response(text, {
		headers: {
			'content-type': 'application/json; charset=utf-8',
			'content-disposition': `${event.url.searchParams.has('download') ? 'attachment' : 'inline'}; filename="${label}.model.json"`,
			etag: `"${sha256}"`,
			'x-artefact-sha256': sha256
		}
	});
});
