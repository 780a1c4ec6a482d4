import { createHash, randomBytes } from 'node:crypto';
import { Op } from 'sequelize';
import { models } from './db';

export function hashToken(token: string) {
	return createHash('sha256').update(token).digest('hex');
}

/** A new instrument token: shown once, only its hash is stored. */
export function newToken() {
	const prefix = randomBytes(4).toString('hex');
	const token = `lgt_${prefix}_${randomBytes(24).toString('base64url')}`;
	return { token, prefix, hash: hashToken(token) };
}

export async function instrumentForToken(token: string) {
	const { InstrumentToken, Instrument } = models();
	const row = await InstrumentToken.findOne({ where: { tokenHash: hashToken(token), revokedAt: { [Op.is]: null } } });
	if (!row) return null;
	const instrument = await Instrument.findByPk(row.instrumentId);
	if (!instrument || !instrument.active) return null;
	return { token: row, instrument };
}
