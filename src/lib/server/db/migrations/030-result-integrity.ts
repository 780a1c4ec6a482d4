import type { Sequelize } from 'sequelize';

const up = `
-- Invalidation of one scan: proposed with an assignable cause, approved or refused by a QA user who is not the
-- proposer, with an electronic signature. Only an approved invalidation stops a scan from counting; nothing is deleted.
CREATE TABLE scan_invalidations (
  id            serial PRIMARY KEY,
  scan_id       integer NOT NULL REFERENCES scans(id),
  lot_id        integer NOT NULL REFERENCES lots(id),
  cause         text NOT NULL CHECK (cause IN ('sample-presentation','instrument-fault','wrong-container','data-transfer','other')),
  description   text NOT NULL CHECK (length(trim(description)) > 0),
  state         text NOT NULL DEFAULT 'proposed' CHECK (state IN ('proposed','approved','refused')),
  proposed_by   integer NOT NULL REFERENCES users(id),
  proposed_at   timestamptz NOT NULL DEFAULT now(),
  decided_by    integer REFERENCES users(id),
  decided_at    timestamptz,
  signature_id  integer REFERENCES signatures(id),
  -- Separation of duties in the schema too: nobody decides their own proposal.
  CHECK (decided_by IS NULL OR decided_by <> proposed_by),
  CHECK ((state = 'proposed') = (decided_by IS NULL)),
  CHECK (state = 'proposed' OR signature_id IS NOT NULL)
);
-- At most one live (proposed or approved) invalidation per scan; a refused one may be followed by a new proposal.
CREATE UNIQUE INDEX scan_invalidations_one_live ON scan_invalidations (scan_id) WHERE state <> 'refused';
CREATE INDEX scan_invalidations_lot ON scan_invalidations (lot_id, id);

CREATE FUNCTION scan_invalidations_immutable() RETURNS trigger LANGUAGE plpgsql AS $$
BEGIN
  IF TG_OP = 'DELETE' THEN RAISE EXCEPTION 'invalidations are never deleted'; END IF;
  IF OLD.state <> 'proposed' THEN RAISE EXCEPTION 'a decided invalidation is never edited'; END IF;
  IF (NEW.scan_id, NEW.lot_id, NEW.cause, NEW.description, NEW.proposed_by, NEW.proposed_at)
     IS DISTINCT FROM (OLD.scan_id, OLD.lot_id, OLD.cause, OLD.description, OLD.proposed_by, OLD.proposed_at) THEN
    RAISE EXCEPTION 'a proposed invalidation is decided, not edited';
  END IF;
  RETURN NEW;
END $$;
CREATE TRIGGER scan_invalidations_no_edit BEFORE UPDATE OR DELETE ON scan_invalidations
  FOR EACH ROW EXECUTE FUNCTION scan_invalidations_immutable();

-- Replicate scans per container the material's sampling policy asks for (k = 1..5); a container is genuine only
-- when all k are genuine.
ALTER TABLE materials ADD COLUMN replicates integer NOT NULL DEFAULT 1 CHECK (replicates BETWEEN 1 AND 5);
`;

export default {
	name: '030-result-integrity',
	async up(sequelize: Sequelize) {
		await sequelize.query(up);
	},
	async down(sequelize: Sequelize) {
		await sequelize.query(`
			ALTER TABLE materials DROP COLUMN replicates;
			DROP TABLE scan_invalidations; DROP FUNCTION scan_invalidations_immutable();`);
	}
};
