import type { Sequelize } from 'sequelize';

const up = `
-- Instrument performance checks (wavelength/wavenumber accuracy, photometric linearity, noise). The plan (kinds,
-- intervals, standard bands, tolerances) is per instrument; NULL means the technique's default plan in
-- src/lib/server/services/instrument-checks.ts. An instrument must have its first checks by checks_due_from:
-- existing instruments get 30 days from this migration, so nothing becomes unusable by surprise.
ALTER TABLE instruments ADD COLUMN check_plan jsonb;
ALTER TABLE instruments ADD COLUMN checks_due_from date NOT NULL DEFAULT (current_date + 30);

CREATE TABLE instrument_checks (
  id            serial PRIMARY KEY,
  instrument_id integer NOT NULL REFERENCES instruments(id),
  kind          text NOT NULL CHECK (kind IN ('wavelength','linearity','noise')),
  performed_at  timestamptz NOT NULL DEFAULT now(),
  performed_by  integer REFERENCES users(id),
  file_name     text,
  raw           bytea,
  sha256        text,
  input         jsonb NOT NULL DEFAULT '{}',
  figures       jsonb NOT NULL,
  tolerance     jsonb NOT NULL,
  passed        boolean NOT NULL,
  summary       text NOT NULL
);
CREATE INDEX instrument_checks_latest ON instrument_checks (instrument_id, kind, performed_at DESC, id DESC);

CREATE FUNCTION instrument_checks_immutable() RETURNS trigger LANGUAGE plpgsql AS $$
BEGIN
  RAISE EXCEPTION 'an instrument check is a record: it is never edited or deleted';
END $$;
CREATE TRIGGER instrument_checks_no_edit BEFORE UPDATE OR DELETE ON instrument_checks
  FOR EACH ROW EXECUTE FUNCTION instrument_checks_immutable();
`;

const down = `
DROP TABLE instrument_checks;
DROP FUNCTION instrument_checks_immutable();
ALTER TABLE instruments DROP COLUMN checks_due_from;
ALTER TABLE instruments DROP COLUMN check_plan;
`;

export default {
	name: '081-instrument-checks',
	async up(sequelize: Sequelize) {
		await sequelize.query(up);
	},
	async down(sequelize: Sequelize) {
		await sequelize.query(down);
	}
};
