import type { Sequelize } from 'sequelize';

const up = `
-- Acceptance criteria per material: proposed by a chemometrician, approved (or refused) by a QA user who did not
-- propose them, with an electronic signature. The latest approved revision applies; without one, the defaults.
CREATE TABLE acceptance_criteria (
  id            serial PRIMARY KEY,
  material_id   integer NOT NULL REFERENCES materials(id),
  revision      integer NOT NULL,
  criteria      jsonb NOT NULL,
  reason        text NOT NULL,
  state         text NOT NULL DEFAULT 'proposed' CHECK (state IN ('proposed','approved','refused','superseded')),
  proposed_by   integer NOT NULL REFERENCES users(id),
  proposed_at   timestamptz NOT NULL DEFAULT now(),
  decided_by    integer REFERENCES users(id),
  decided_at    timestamptz,
  signature_id  integer REFERENCES signatures(id),
  UNIQUE (material_id, revision),
  CHECK (decided_by IS NULL OR decided_by <> proposed_by)
);
CREATE UNIQUE INDEX acceptance_criteria_one_proposed ON acceptance_criteria (material_id) WHERE state = 'proposed';

-- Periodic review and revalidation triggers of a model version.
ALTER TABLE model_versions ADD COLUMN review_by date;
ALTER TABLE model_versions ADD COLUMN revalidation jsonb NOT NULL DEFAULT '[]'::jsonb;
-- The acceptance evaluation the approval was granted on (criteria revision, each criterion with its numbers).
ALTER TABLE model_versions ADD COLUMN acceptance jsonb;
`;

const down = `
ALTER TABLE model_versions DROP COLUMN acceptance;
ALTER TABLE model_versions DROP COLUMN revalidation;
ALTER TABLE model_versions DROP COLUMN review_by;
DROP TABLE acceptance_criteria;
`;

export default {
	name: '040-acceptance-criteria',
	async up(sequelize: Sequelize) {
		await sequelize.query(up);
	},
	async down(sequelize: Sequelize) {
		await sequelize.query(down);
	}
};
