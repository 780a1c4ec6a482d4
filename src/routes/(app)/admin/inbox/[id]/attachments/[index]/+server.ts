import { can } from '$lib/permissions';
import { requireUser } from '$lib/server/guard';
import * as inbox from '$lib/server/inbox';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = async (event) => {
	requireUser(event, can.administer);
	inbox.requireInbox();
	const a = await inbox.attachment(Number(event.params.id), Number(event.params.index));
	return new Response(new Uint8Array(a.content), {
		headers: { 'content-type': a.contentType, 'content-disposition': `attachment; filename="${a.filename.replace(/["\\\r\n]/g, '_')}"`, 'cache-control': 'private, no-store' }
	});
};
