import { can } from '$lib/permissions';
import { json } from '@sveltejs/kit';
import { apiError, handler, requireActor } from '$lib/server/api';
import * as library from '$lib/server/services/library';
import * as materials from '$lib/server/services/materials';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = handler(async (event) => {
	requireActor(event, can.readLibrary);
	const material = await materials.get(event.params.id);
	const q = event.url.searchParams;
	return json(
		await library.list(material.id, {
			page: Number(q.get('page') ?? 1) || 1,
			pageSize: Number(q.get('pageSize') ?? 50) || 50,
			sort: q.get('sort') ?? undefined,
			label: q.get('class') ?? undefined,
			role: q.get('role') ?? undefined,
			supplier: q.get('supplier') ?? undefined,
			instrument: q.get('instrument') ?? undefined,
			q: q.get('q') ?? undefined
		})
	);
});

const text = (form: FormData, name: string) => {
	const v = form.get(name);
	return typeof v === 'string' && v.trim() !== '' ? v.trim() : undefined;
};

/**
 * multipart/form-data: `file` (one or many: a CSV matrix with label columns, or JCAMP-DX / x,y CSV files),
 * `classColumn` (default "class"), `role` (training | test | challenge for every spectrum, or omit to read the `roleColumn`),
 * `class` (label for files without a class column), `supplier`, `supplierLot`, `instrument`. The instrument's axis unit applies when a file does not name its unit.
 */
export const POST: RequestHandler = handler(async (event) => {
	const actor = requireActor(event, can.curateLibrary);
	const material = await materials.get(event.params.id);
	let form: FormData;
	try {
		form = await event.request.formData();
	} catch {
		return apiError(415, 'not-multipart', 'Send the spectra as multipart/form-data with one or more `file` fields');
	}
	const files = await Promise.all(
		form
			.getAll('file')
			.filter((f): f is File => typeof f === 'object' && f !== null && 'arrayBuffer' in f)
			.map(async (f) => ({ name: f.name || 'upload', bytes: new Uint8Array(await f.arrayBuffer()) }))
	);
	const role = text(form, 'role');
	const isRoleValue = role && (library.ROLES as readonly string[]).includes(role.toLowerCase());
	const result = await library.addFiles(actor, material.id, files, {
		classColumn: text(form, 'classColumn'),
		roleColumn: text(form, 'roleColumn') ?? (role && !isRoleValue ? role : undefined),
		supplierColumn: text(form, 'supplierColumn'),
		lotColumn: text(form, 'lotColumn'),
		instrumentColumn: text(form, 'instrumentColumn'),
		class: text(form, 'class'),
		role: isRoleValue ? (role!.toLowerCase() as library.LibraryRole) : undefined,
		supplier: text(form, 'supplier'),
		supplierLot: text(form, 'supplierLot'),
		instrument: text(form, 'instrument')
	});
	return json(result, { status: 201 });
});
