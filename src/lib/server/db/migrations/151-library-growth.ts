import type { Sequelize } from 'sequelize';

const up = `
-- Library growth under change control (issue 14 §4): a released lot's genuine scans become genuine training spectra
-- only through a draft version a chemometrician builds for them. The entry keeps the scan it came from and the draft
-- that proposed it; until that draft is approved, no other build includes it.
ALTER TABLE library_entries ADD COLUMN source_scan_id integer REFERENCES scans(id);
ALTER TABLE library_entries ADD COLUMN proposed_in integer REFERENCES model_versions(id);
CREATE UNIQUE INDEX library_entries_source_scan ON library_entries (source_scan_id) WHERE source_scan_id IS NOT NULL;
`;

export default {
	name: '151-library-growth',
	async up(sequelize: Sequelize) {
		await sequelize.query(up);
	},
	async down(sequelize: Sequelize) {
		await sequelize.query('DROP INDEX library_entries_source_scan; ALTER TABLE library_entries DROP COLUMN proposed_in; ALTER TABLE library_entries DROP COLUMN source_scan_id;');
	}
};
