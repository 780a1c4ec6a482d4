import type { Sequelize } from 'sequelize';

const up = `
-- The instrument's declared ordinate ceiling for the saturation gate. NULL takes the technique default, common
-- practice: 3.0 absorbance units for NIR and mid-IR, 65535 counts (16-bit full scale) for Raman (docs/methods.md §22).
ALTER TABLE instruments ADD COLUMN ordinate_ceiling double precision CHECK (ordinate_ceiling IS NULL OR ordinate_ceiling > 0);
-- Per-material overrides of the quality gate thresholds (flatRange, saturationRun, noSampleRatio, absorbanceMax).
ALTER TABLE materials ADD COLUMN quality_gates jsonb NOT NULL DEFAULT '{}'::jsonb CHECK (jsonb_typeof(quality_gates) = 'object');
`;

export default {
	name: '031-quality-gates',
	async up(sequelize: Sequelize) {
		await sequelize.query(up);
	},
	async down(sequelize: Sequelize) {
		await sequelize.query('ALTER TABLE materials DROP COLUMN quality_gates; ALTER TABLE instruments DROP COLUMN ordinate_ceiling;');
	}
};
