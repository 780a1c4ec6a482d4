import { z } from 'zod';
import { models, transaction } from '../db';
import type { Instrument } from '../db/models';
import { hasRole, type Actor } from './actor';
import * as audit from './audit';
import { conflict, forbidden } from './errors';

export const instrumentSchema = z.object({
	name: z.string().trim().regex(/^[A-Za-z0-9][A-Za-z0-9 _.-]{1,39}$/, 'Use 2–40 letters, digits, spaces, dots or dashes'),
	technique: z.enum(['NIR', 'Raman', 'mid-IR']),
	serial: z.string().trim().min(1, 'Enter the serial number').max(80),
	axisUnit: z.enum(['nm', 'cm-1', 'um']),
	qualificationDue: z.string().regex(/^\d{4}-\d{2}-\d{2}$/, 'Use a date, YYYY-MM-DD')
});
export type InstrumentInput = z.input<typeof instrumentSchema>;

export const toPublic = (i: Instrument) => ({
	id: i.id,
	name: i.name,
	technique: i.technique,
	serial: i.serial,
	axisUnit: i.axisUnit,
	qualificationDue: i.qualificationDue,
	active: i.active
});

export async function create(actor: Actor, input: InstrumentInput, reason?: string) {
	if (!hasRole(actor, 'admin')) throw forbidden('Only an admin registers instruments');
	const data = instrumentSchema.parse(input);
	return transaction(async (tx) => {
		const { Instrument } = models();
		if (await Instrument.findOne({ where: { name: data.name }, transaction: tx })) throw conflict(`An instrument named ${data.name} exists`, 'name');
		const instrument = await Instrument.create(data, { transaction: tx });
		await audit.record(tx, actor, { action: 'instrument.created', entity: 'instrument', entityId: instrument.id, after: toPublic(instrument), reason });
		return toPublic(instrument);
	});
}

export async function list() {
	return (await models().Instrument.findAll({ order: [['name', 'ASC']] })).map(toPublic);
}
