import type { Sequelize } from 'sequelize';

const up = `
-- Alerts now come in two kinds: 'verdict' (a non-genuine scan, as before) and 'drift' (a lot's statistic broke a
-- control-chart rule against the supplier's own history). A drift alert names no scan; each kind keeps its own
-- single live alert per lot.
ALTER TABLE alerts ADD COLUMN kind text NOT NULL DEFAULT 'verdict' CHECK (kind IN ('verdict','drift'));
ALTER TABLE alerts ALTER COLUMN scan_id DROP NOT NULL;
ALTER TABLE alerts ADD CONSTRAINT alerts_verdict_has_scan CHECK (kind = 'drift' OR scan_id IS NOT NULL);
DROP INDEX alerts_one_live_per_lot;
CREATE UNIQUE INDEX alerts_one_live_per_lot_kind ON alerts (lot_id, kind) WHERE state <> 'closed';

-- One row per lot that raised a drift signal, as judged when its screening completed.
CREATE TABLE drift_signals (
  id          serial PRIMARY KEY,
  supplier_id integer NOT NULL REFERENCES suppliers(id),
  material_id integer NOT NULL REFERENCES materials(id),
  lot_id      integer NOT NULL UNIQUE REFERENCES lots(id),
  rule        integer NOT NULL CHECK (rule BETWEEN 1 AND 4),
  message     text NOT NULL,
  value       double precision NOT NULL,
  centre      double precision NOT NULL,
  lcl         double precision NOT NULL,
  ucl         double precision NOT NULL,
  alert_id    integer REFERENCES alerts(id),
  created_at  timestamptz NOT NULL DEFAULT now()
);
CREATE INDEX drift_signals_supplier ON drift_signals (supplier_id, material_id);

-- Baseline restarts (after a confirmed process change): lots received after (after_received_at, after_lot_id) form
-- a new history. Only a chemometrician records one, with a reason; rows are never changed.
CREATE TABLE drift_baselines (
  id                serial PRIMARY KEY,
  supplier_id       integer NOT NULL REFERENCES suppliers(id),
  material_id       integer NOT NULL REFERENCES materials(id),
  after_received_at date NOT NULL,
  after_lot_id      integer NOT NULL REFERENCES lots(id),
  reason            text NOT NULL CHECK (length(trim(reason)) > 0),
  created_by        integer NOT NULL REFERENCES users(id),
  created_at        timestamptz NOT NULL DEFAULT now()
);
CREATE INDEX drift_baselines_pair ON drift_baselines (supplier_id, material_id, id);
`;

const down = `
DROP TABLE drift_baselines;
DROP TABLE drift_signals;
DROP INDEX alerts_one_live_per_lot_kind;
DELETE FROM alerts WHERE kind = 'drift';
CREATE UNIQUE INDEX alerts_one_live_per_lot ON alerts (lot_id) WHERE state <> 'closed';
ALTER TABLE alerts DROP CONSTRAINT alerts_verdict_has_scan;
ALTER TABLE alerts ALTER COLUMN scan_id SET NOT NULL;
ALTER TABLE alerts DROP COLUMN kind;
`;

export default {
	name: '080-supplier-drift',
	async up(sequelize: Sequelize) {
		await sequelize.query(up);
	},
	async down(sequelize: Sequelize) {
		await sequelize.query(down);
	}
};
