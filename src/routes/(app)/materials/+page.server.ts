import { can } from '$lib/permissions';
import { fail, redirect } from '@sveltejs/kit';
import { superValidate } from 'sveltekit-superforms';
import { zod } from 'sveltekit-superforms/adapters';
import { QueryTypes } from 'sequelize';
import { emailListField, splitList } from '$lib/server/forms';
import { requireUser } from '$lib/server/guard';
import { hasRole } from '$lib/server/services/actor';
import { sequelize } from '$lib/server/db';
import * as materials from '$lib/server/services/materials';
import { refuse } from './service-errors.server';
import type { Actions, PageServerLoad } from './$types';

const createSchema = materials.materialSchema.omit({ recipients: true }).extend({
	recipients: emailListField('recipients', 50)
});

export const load = (async (event) => {
	const actor = requireUser(event);
	const rows = await materials.list();
	const stats = await sequelize().query<{ material_id: number; library: string; approved: number | null; drafts: string }>(
		`SELECT m.id AS material_id,
		        (SELECT count(*) FROM library_entries e WHERE e.material_id = m.id) AS library,
		        (SELECT version FROM model_versions v WHERE v.material_id = m.id AND v.state = 'approved') AS approved,
		        (SELECT count(*) FROM model_versions v WHERE v.material_id = m.id AND v.state IN ('draft','building')) AS drafts
		   FROM materials m`,
		{ type: QueryTypes.SELECT }
	);
	const byId = new Map(stats.map((s) => [s.material_id, s]));
	return {
		rows: rows.map((m) => ({ ...m, library: Number(byId.get(m.id)?.library ?? 0), approved: byId.get(m.id)?.approved ?? null, drafts: Number(byId.get(m.id)?.drafts ?? 0) })),
		canManage: hasRole(actor, can.manageMaterials),
		form: await superValidate(zod(createSchema))
	};
}) satisfies PageServerLoad;

export const actions = {
	create: async (event) => {
		const actor = requireUser(event, can.manageMaterials);
		const form = await superValidate(event.request, zod(createSchema));
		if (!form.valid) return fail(400, { form });
		let code: string;
		try {
			code = (await materials.create(actor, { ...form.data, recipients: splitList(form.data.recipients) })).code;
		} catch (error) {
			return refuse(form, error);
		}
		redirect(303, `/materials/${code}`);
	}
} satisfies Actions;
