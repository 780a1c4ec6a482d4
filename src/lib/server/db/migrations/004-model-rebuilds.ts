import type { Sequelize } from 'sequelize';

// Rebuilds: exclusions/re-inclusions are marked on a version first (pending) and consumed by the next rebuild,
// and a re-included spectrum keeps the reason it came back, so a diff can show both directions.
const up = `
ALTER TABLE model_memberships ADD COLUMN inclusion_reason text;
ALTER TABLE model_versions ADD COLUMN pending jsonb NOT NULL DEFAULT '{"exclude":[],"include":[]}';
ALTER TABLE model_versions ADD COLUMN change_note text;
CREATE INDEX model_versions_material ON model_versions (material_id, version DESC);
CREATE INDEX model_memberships_entry ON model_memberships (library_entry_id);
`;

export default {
	name: '004-model-rebuilds',
	async up(sequelize: Sequelize) {
		await sequelize.query(up);
	},
	async down(sequelize: Sequelize) {
		await sequelize.query(`
			DROP INDEX model_memberships_entry; DROP INDEX model_versions_material;
			ALTER TABLE model_versions DROP COLUMN change_note; ALTER TABLE model_versions DROP COLUMN pending;
			ALTER TABLE model_memberships DROP COLUMN inclusion_reason;`);
	}
};
