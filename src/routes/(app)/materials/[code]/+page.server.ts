import { can } from '$lib/permissions';
import { fail } from '@sveltejs/kit';
import { ZodError } from 'zod';
import { message, superValidate } from 'sveltekit-superforms';
import { zod } from 'sveltekit-superforms/adapters';
import { chooseOne } from '$lib/server/forms';
import { requireUser } from '$lib/server/guard';
import { hasRole } from '$lib/server/services/actor';
import { ServiceError } from '$lib/server/services/errors';
import * as library from '$lib/server/services/library';
import * as materials from '$lib/server/services/materials';
import * as versions from '$lib/server/services/model-versions';
import * as transfers from '$lib/server/services/transfers';
import { refuse } from '../service-errors.server';
import type { Actions, PageServerLoad } from './$types';

// The kind of a new class is the user's choice (a suspect profile recorded as genuine would accept it): never pre-selected.
const classFormSchema = materials.classSchema.extend({ kind: chooseOne(['genuine', 'suspect'], 'Choose the kind: genuine or suspect profile') });

export const load = (async (event) => {
	const actor = requireUser(event);
	const material = await materials.get(event.params.code);
	const q = event.url.searchParams;
	const filters = {
		sort: q.get('sort') ?? 'id',
		class: q.get('class') ?? '',
		role: q.get('role') ?? '',
		supplier: q.get('supplier') ?? '',
		instrument: q.get('instrument') ?? '',
		q: q.get('q') ?? ''
	};
	const page = Math.max(1, Number(q.get('page') ?? 1) || 1);
	const [classes, result, summary, facets, modelVersions] = await Promise.all([
		materials.classes(material.id),
		library.list(material.id, { page, pageSize: 25, sort: filters.sort, label: filters.class || undefined, role: filters.role || undefined, supplier: filters.supplier || undefined, instrument: filters.instrument || undefined, q: filters.q || undefined }),
		library.summary(material.id),
		library.facets(material.id),
		versions.listForMaterial(material.id)
	]);
	const spectra = await library.withSpectra(result.rows.map((r) => r.id));
	return {
		material: materials.toPublic(material),
		classes,
		library: result,
		summary,
		facets,
		filters,
		plot: {
			unit: spectra[0]?.unit ?? '',
			spectra: spectra.map((s) => ({ id: String(s.id), axis: s.axis, values: s.values })),
			meta: library.plotMeta(result.rows)
		},
		versions: modelVersions,
		canManage: hasRole(actor, can.manageMaterials),
		requireInstrument: await transfers.requiresInstrument(material.id),
		classForm: await superValidate(zod(classFormSchema), { id: 'add-class' })
	};
}) satisfies PageServerLoad;

export const actions = {
	setReplicates: async (event) => {
		const actor = requireUser(event, can.manageMaterials);
		const data = await event.request.formData();
		try {
			const updated = await materials.setReplicates(actor, event.params.code, { replicates: String(data.get('replicates') ?? '') as unknown as number, reason: String(data.get('reason') ?? '') });
			return { replicatesSet: updated.replicates };
		} catch (error) {
			if (error instanceof ServiceError) return fail(error.status === 403 ? 403 : 400, { replicatesError: error.message });
			if (error instanceof ZodError) return fail(400, { replicatesError: error.issues[0]?.message ?? 'Invalid input' });
			throw error;
		}
	},
	setAxis: async (event) => {
		const actor = requireUser(event, can.manageMaterials);
		const material = await materials.get(event.params.code);
		const data = await event.request.formData();
		const values = Object.fromEntries(['unit', 'from', 'to', 'step', 'reason'].map((k) => [k, String(data.get(k) ?? '').trim()]));
		try {
			const updated = await materials.setAxis(actor, material.id, { unit: values.unit as 'nm', from: values.from, to: values.to, step: values.step === '' ? null : values.step } as unknown as materials.AxisInput, values.reason);
			return { axisSet: materials.axisText(updated.axis!) };
		} catch (error) {
			if (error instanceof ServiceError) return fail(error.status === 403 ? 403 : 400, { axisError: { message: error.message, field: error.field ?? null, values } });
			if (error instanceof ZodError) return fail(400, { axisError: { message: error.issues[0]?.message ?? 'Invalid input', field: String(error.issues[0]?.path[0] ?? '') || null, values } });
			throw error;
		}
	},
	requireInstrument: async (event) => {
		const actor = requireUser(event, can.manageMaterials);
		const material = await materials.get(event.params.code);
		const data = await event.request.formData();
		try {
			await transfers.setRequireInstrument(actor, material.id, { required: data.get('required') === 'on', reason: String(data.get('reason') ?? '') });
			return { requireInstrumentSet: true };
		} catch (error) {
			if (error instanceof ServiceError) return fail(error.status === 403 ? 403 : 400, { requireInstrumentError: error.message });
			if (error instanceof ZodError) return fail(400, { requireInstrumentError: error.issues[0]?.message ?? 'Invalid input' });
			throw error;
		}
	},
	addClass: async (event) => {
		const actor = requireUser(event, can.manageMaterials);
		const material = await materials.get(event.params.code);
		const form = await superValidate(event.request, zod(classFormSchema), { id: 'add-class' });
		if (!form.valid) return fail(400, { classForm: form });
		try {
			const created = await materials.addClass(actor, material.id, { ...form.data, kind: form.data.kind as 'genuine' | 'suspect' });
			return message(form, `Added class ${created.name}`);
		} catch (error) {
			return refuse(form, error, 'classForm');
		}
	},
	upload: async (event) => {
		const actor = requireUser(event, can.manageMaterials);
		const material = await materials.get(event.params.code);
		const data = await event.request.formData();
		const text = (name: string) => {
			const v = data.get(name);
			return typeof v === 'string' && v.trim() ? v.trim() : undefined;
		};
		const files = await Promise.all(
			data
				.getAll('file')
				.filter((f): f is File => typeof f === 'object' && f !== null && 'arrayBuffer' in f && (f as File).size > 0)
				.map(async (f) => ({ name: f.name, bytes: new Uint8Array(await f.arrayBuffer()) }))
		);
		const role = text('role');
		try {
			const result = await library.addFiles(actor, material.id, files, {
				classColumn: text('classColumn'),
				class: text('class'),
				role: role === 'column' ? undefined : (role as library.LibraryRole | undefined),
				supplier: text('supplier'),
				supplierLot: text('supplierLot'),
				instrument: text('instrument')
			});
			return { upload: { ok: true as const, message: `Added ${result.added} spectra: ${Object.entries(result.byRoleAndLabel).map(([k, n]) => `${n} ${k.replace(':', ' · ')}`).join(', ')}` } };
		} catch (error) {
			if (error instanceof ServiceError) return fail(error.status === 409 ? 409 : 400, { upload: { ok: false as const, message: error.message } });
			throw error;
		}
	}
} satisfies Actions;
