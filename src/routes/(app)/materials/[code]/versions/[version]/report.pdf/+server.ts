import { requireUser } from '$lib/server/guard';
import { validationPdf } from '$lib/server/reports/validation-pdf';
import * as audit from '$lib/server/services/audit';
import * as versions from '$lib/server/services/model-versions';
import { DEFAULT_TIME_ZONE } from '$lib/signature-time';
import { versionIdFor } from '../version.server';
import type { RequestHandler } from './$types';
import { config } from '$lib/server/config';

export const GET: RequestHandler = async (event) => {
	requireUser(event);
	const id = await versionIdFor(event.params);
	const [v, extras] = await Promise.all([versions.get(id), versions.reportExtras(id)]);
	// Times in the zone the certificate prints them in.
	const pdf = await validationPdf(v, await audit.head(), extras, config().LOTGATE_TIME_ZONE || DEFAULT_TIME_ZONE);
	return new Response(new Uint8Array(pdf), {
		headers: { 'content-type': 'application/pdf', 'content-disposition': `inline; filename="${v.materialCode}-v${v.version}-validation.pdf"` }
	});
};
