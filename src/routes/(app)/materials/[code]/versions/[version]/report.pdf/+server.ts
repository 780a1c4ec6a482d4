import { requireUser } from '$lib/server/guard';
import { validationPdf } from '$lib/server/reports/validation-pdf';
import * as audit from '$lib/server/services/audit';
import * as versions from '$lib/server/services/model-versions';
import { versionIdFor } from '../version.server';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = async (event) => {
	requireUser(event);
	const v = await versions.get(await versionIdFor(event.params));
	const pdf = await validationPdf(v, await audit.head());
	return new Response(new Uint8Array(pdf), {
		headers: { 'content-type': 'application/pdf', 'content-disposition': `inline; filename="${v.materialCode}-v${v.version}-validation.pdf"` }
	});
};
