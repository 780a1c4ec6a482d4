import { can } from '$lib/permissions';
import { requireUser } from '$lib/server/guard';
import * as inbox from '$lib/server/inbox';
import type { RequestHandler } from './$types';
import { contentDisposition } from '$lib/validation/text';

export const GET: RequestHandler = async (event) => {
	requireUser(event, can.administer);
	inbox.requireInbox();
	const a = await inbox.attachment(Number(event.params.id), Number(event.params.index));
	return new Response(new Uint8Array(a.content), {
		headers: { 'content-type': a.contentType, 'content-disposition': contentDisposition('attachment', a.filename), 'cache-control': 'private, no-store' }
	});
};
