import type { Sequelize } from 'sequelize';

const up = `
-- Electronic signatures (21 CFR 11.50/11.70): printed name, time, meaning, reason, and the hash of the signed record.
CREATE TABLE signatures (
  id          serial PRIMARY KEY,
  signer_id   integer NOT NULL REFERENCES users(id),
  signer_name text NOT NULL,
  meaning     text NOT NULL,
  reason      text NOT NULL CHECK (length(trim(reason)) > 0),
  signed_at   timestamptz NOT NULL,
  record_type text NOT NULL,
  record_id   text NOT NULL,
  record_hash text NOT NULL
);
CREATE INDEX signatures_record ON signatures (record_type, record_id);

-- A material's labelled reference spectra; label is the class name, or an alien's label for challenge spectra.
CREATE TABLE library_entries (
  id            serial PRIMARY KEY,
  material_id   integer NOT NULL REFERENCES materials(id),
  spectrum_id   bigint NOT NULL UNIQUE REFERENCES spectra(id),
  class_id      integer REFERENCES material_classes(id),
  label         text NOT NULL,
  role          text NOT NULL CHECK (role IN ('training','test','challenge')),
  supplier_id   integer REFERENCES suppliers(id),
  supplier_lot  text,
  instrument_id integer REFERENCES instruments(id),
  created_by    integer REFERENCES users(id),
  created_at    timestamptz NOT NULL DEFAULT now()
);
CREATE INDEX library_entries_material ON library_entries (material_id, role);

CREATE TABLE model_versions (
  id              serial PRIMARY KEY,
  material_id     integer NOT NULL REFERENCES materials(id),
  version         integer NOT NULL,
  state           text NOT NULL CHECK (state IN ('building','failed','draft','approved','retired')),
  params          jsonb NOT NULL,
  artefact        jsonb,
  artefact_sha256 text,
  engine_version  text,
  progress        jsonb NOT NULL DEFAULT '{}',
  error           text,
  job_id          text,
  parent_id       integer REFERENCES model_versions(id),
  figures         jsonb,
  validation      jsonb,
  built_by        integer NOT NULL REFERENCES users(id),
  created_at      timestamptz NOT NULL DEFAULT now(),
  finished_at     timestamptz,
  approved_by     integer REFERENCES users(id),
  approved_at     timestamptz,
  approval_signature_id integer REFERENCES signatures(id),
  retired_at      timestamptz,
  UNIQUE (material_id, version)
);
CREATE UNIQUE INDEX one_approved_version_per_material ON model_versions (material_id) WHERE state = 'approved';

-- Which library spectra a version trained on, and why any were left out.
CREATE TABLE model_memberships (
  model_version_id   integer NOT NULL REFERENCES model_versions(id),
  library_entry_id   integer NOT NULL REFERENCES library_entries(id),
  included           boolean NOT NULL,
  exclusion_category text CHECK (exclusion_category IN ('instrument-fault','mislabelled','sample-preparation','statistical-outlier','other')),
  exclusion_reason   text,
  PRIMARY KEY (model_version_id, library_entry_id),
  CHECK (included OR (exclusion_category IS NOT NULL AND length(trim(coalesce(exclusion_reason,''))) > 0))
);
`;

export default {
	name: '002-method-development',
	async up(sequelize: Sequelize) {
		await sequelize.query(up);
	},
	async down(sequelize: Sequelize) {
		await sequelize.query('DROP TABLE model_memberships; DROP TABLE model_versions; DROP TABLE library_entries; DROP TABLE signatures;');
	}
};
