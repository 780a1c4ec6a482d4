import type { Sequelize } from 'sequelize';

const up = `
-- Model transfer (issue 14 §3). Genuine spectra measured on an instrument a version was not built on are library
-- entries of role 'transfer': they never train and never enter the validation set; a transfer check screens them.
ALTER TABLE library_entries DROP CONSTRAINT library_entries_role_check;
ALTER TABLE library_entries ADD CONSTRAINT library_entries_role_check CHECK (role IN ('training','test','challenge','transfer'));

-- A material may require the instrument to be stated for every scan (otherwise such scans are screened and flagged).
ALTER TABLE materials ADD COLUMN require_instrument boolean NOT NULL DEFAULT false;

-- One transfer check of a version to an instrument: its evaluation is stored as computed; QA approves it with an
-- e-signature (never the person who ran it). Only an approved transfer lets the version screen that instrument's scans.
CREATE TABLE model_transfers (
  id               serial PRIMARY KEY,
  model_version_id integer NOT NULL REFERENCES model_versions(id),
  instrument_id    integer NOT NULL REFERENCES instruments(id),
  state            text NOT NULL CHECK (state IN ('failed','proposed','approved','refused')),
  evaluation       jsonb NOT NULL,
  entry_ids        integer[] NOT NULL,
  note             text NOT NULL CHECK (length(trim(note)) > 0),
  checked_by       integer NOT NULL REFERENCES users(id),
  checked_at       timestamptz NOT NULL DEFAULT now(),
  decided_by       integer REFERENCES users(id),
  decided_at       timestamptz,
  signature_id     integer REFERENCES signatures(id),
  CHECK (state IN ('failed','proposed') OR (decided_by IS NOT NULL AND signature_id IS NOT NULL)),
  CHECK (decided_by IS NULL OR decided_by <> checked_by)
);
CREATE UNIQUE INDEX model_transfers_one_open ON model_transfers (model_version_id, instrument_id) WHERE state IN ('proposed','approved');
`;

const down = `
DROP TABLE model_transfers;
ALTER TABLE materials DROP COLUMN require_instrument;
ALTER TABLE library_entries DROP CONSTRAINT library_entries_role_check;
ALTER TABLE library_entries ADD CONSTRAINT library_entries_role_check CHECK (role IN ('training','test','challenge'));
`;

export default {
	name: '150-model-transfer',
	async up(sequelize: Sequelize) {
		await sequelize.query(up);
	},
	async down(sequelize: Sequelize) {
		await sequelize.query(down);
	}
};
