// Shared by the version page, its report, diff and approval pages: find the version by material code and number.
import { error } from '@sveltejs/kit';
import * as versions from '$lib/server/services/model-versions';

export async function versionIdFor(params: { code: string; version: string }) {
	if (!/^\d+$/.test(params.version)) error(404, 'No such version');
	try {
		return await versions.resolve(`${params.code}@${params.version}`);
	} catch {
		error(404, `${params.code} has no version ${params.version}`);
	}
}
