import type { Sequelize } from 'sequelize';

// A material declares its measurement axis (unit, range, step; issue 12 §3). Builds use it and never narrow it.
// Materials that already have library spectra take the axis of their first library spectrum, as a new material does
// at its first upload (source "first-upload"); the step stays null (the spectrum's own grid) because SQL cannot check
// that a stored grid is uniform.
const up = `
ALTER TABLE materials ADD COLUMN axis jsonb;
UPDATE materials m
   SET axis = jsonb_build_object(
         'unit', f.unit,
         'from', LEAST(f.axis[1], f.axis[array_length(f.axis, 1)]),
         'to', GREATEST(f.axis[1], f.axis[array_length(f.axis, 1)]),
         'step', NULL,
         'source', 'first-upload',
         'setAt', now(),
         'reason', 'taken from the first library spectrum (migration)')
  FROM (SELECT DISTINCT ON (e.material_id) e.material_id, sp.unit, sp.axis
          FROM library_entries e JOIN spectra sp ON sp.id = e.spectrum_id
         ORDER BY e.material_id, e.id) f
 WHERE f.material_id = m.id AND m.axis IS NULL;
`;

export default {
	name: '120-declared-axis',
	up: async (sequelize: Sequelize) => {
		await sequelize.query(up);
	},
	down: async (sequelize: Sequelize) => {
		await sequelize.query('ALTER TABLE materials DROP COLUMN axis');
	}
};
