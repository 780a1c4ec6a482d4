import type { Sequelize } from 'sequelize';

// Lot screening extras: a stored scan whose lot had no approved model can be screened again later from the same
// stored spectrum (a new scan row pointing at it, linked to the first), so scans.spectrum_id is no longer unique.
const up = `
ALTER TABLE scans DROP CONSTRAINT scans_spectrum_id_key;
CREATE INDEX scans_spectrum ON scans (spectrum_id);
ALTER TABLE scans ADD COLUMN rescreen_of integer REFERENCES scans(id);
CREATE INDEX lots_material ON lots (material_id, received_at DESC);
CREATE INDEX lots_supplier ON lots (supplier_id, received_at DESC);
`;

export default {
	name: '005-lots-extra',
	async up(sequelize: Sequelize) {
		await sequelize.query(up);
	},
	async down(sequelize: Sequelize) {
		await sequelize.query(`
			DROP INDEX lots_supplier; DROP INDEX lots_material;
			ALTER TABLE scans DROP COLUMN rescreen_of; DROP INDEX scans_spectrum;
			ALTER TABLE scans ADD CONSTRAINT scans_spectrum_id_key UNIQUE (spectrum_id);`);
	}
};
