import type { Sequelize } from 'sequelize';

const up = `
CREATE SEQUENCE internal_lot_seq START 1001;

CREATE TABLE lots (
  id               serial PRIMARY KEY,
  internal_lot     text NOT NULL UNIQUE,
  material_id      integer NOT NULL REFERENCES materials(id),
  supplier_id      integer NOT NULL REFERENCES suppliers(id),
  supplier_lot     text NOT NULL,
  containers       integer NOT NULL CHECK (containers BETWEEN 1 AND 10000),
  received_at      date NOT NULL,
  plan             jsonb NOT NULL,
  sampled          integer[] NOT NULL,
  status           text NOT NULL DEFAULT 'awaiting-scans'
                   CHECK (status IN ('awaiting-scans','screened','released','quarantined','rejected')),
  identity         text CHECK (identity IN ('meets','fails','not-screened')),
  supplier_flag    text,
  created_by       integer REFERENCES users(id),
  created_at       timestamptz NOT NULL DEFAULT now(),
  UNIQUE (supplier_id, material_id, supplier_lot)
);
CREATE INDEX lots_status ON lots (status);

-- One row per uploaded container scan; a rescan adds a row, never overwrites one.
CREATE TABLE scans (
  id               serial PRIMARY KEY,
  lot_id           integer NOT NULL REFERENCES lots(id),
  container        integer NOT NULL CHECK (container >= 1),
  spectrum_id      bigint NOT NULL UNIQUE REFERENCES spectra(id),
  model_version_id integer REFERENCES model_versions(id),
  verdict          text NOT NULL CHECK (verdict IN ('genuine','suspect','unknown','not-this-material','unusable','not-screened')),
  profile          text,
  ambiguous        boolean NOT NULL DEFAULT false,
  reason           text,
  result           jsonb,
  instrument_id    integer REFERENCES instruments(id),
  created_by       integer REFERENCES users(id),
  created_at       timestamptz NOT NULL DEFAULT now()
);
CREATE INDEX scans_lot_container ON scans (lot_id, container, id);
`;

export default {
	name: '003-lots',
	async up(sequelize: Sequelize) {
		await sequelize.query(up);
	},
	async down(sequelize: Sequelize) {
		await sequelize.query('DROP TABLE scans; DROP TABLE lots; DROP SEQUENCE internal_lot_seq;');
	}
};
