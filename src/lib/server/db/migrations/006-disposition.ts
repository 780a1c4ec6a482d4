import type { Sequelize } from 'sequelize';

const up = `
-- QA decisions on a lot. A disposition is never edited: a correction is a new row that supersedes it, and only
-- state, effective_at, second_signature_id and superseded_by ever change (the trigger below enforces that).
CREATE TABLE dispositions (
  id                  serial PRIMARY KEY,
  lot_id              integer NOT NULL REFERENCES lots(id),
  decision            text NOT NULL CHECK (decision IN ('release','quarantine','reject')),
  state               text NOT NULL CHECK (state IN ('awaiting-second-signature','effective','superseded')),
  needs_second        boolean NOT NULL DEFAULT false,
  -- The signed record: the lot, its counted scans with verdicts, and the model version; record_hash is its sha256.
  record              jsonb NOT NULL,
  record_hash         text NOT NULL,
  signature_id        integer NOT NULL REFERENCES signatures(id),
  second_signature_id integer REFERENCES signatures(id),
  supersedes_id       integer REFERENCES dispositions(id),
  superseded_by       integer REFERENCES dispositions(id),
  status_before       text NOT NULL,
  created_by          integer NOT NULL REFERENCES users(id),
  created_at          timestamptz NOT NULL DEFAULT now(),
  effective_at        timestamptz,
  CHECK (state <> 'effective' OR effective_at IS NOT NULL),
  -- The two-person rule, also in the schema: an effective release of a failed lot carries two signatures.
  CHECK (NOT (needs_second AND state = 'effective' AND second_signature_id IS NULL))
);
CREATE INDEX dispositions_lot ON dispositions (lot_id, id DESC);
-- At most one effective and one pending disposition per lot: a pending release leaves the effective quarantine in force.
CREATE UNIQUE INDEX dispositions_one_effective ON dispositions (lot_id) WHERE state = 'effective';
CREATE UNIQUE INDEX dispositions_one_pending ON dispositions (lot_id) WHERE state = 'awaiting-second-signature';

CREATE FUNCTION dispositions_immutable() RETURNS trigger LANGUAGE plpgsql AS $$
BEGIN
  IF TG_OP = 'DELETE' THEN RAISE EXCEPTION 'dispositions are never deleted'; END IF;
  IF (NEW.lot_id, NEW.decision, NEW.needs_second, NEW.record, NEW.record_hash, NEW.signature_id, NEW.supersedes_id,
      NEW.status_before, NEW.created_by, NEW.created_at)
     IS DISTINCT FROM
     (OLD.lot_id, OLD.decision, OLD.needs_second, OLD.record, OLD.record_hash, OLD.signature_id, OLD.supersedes_id,
      OLD.status_before, OLD.created_by, OLD.created_at) THEN
    RAISE EXCEPTION 'a disposition is never edited: record a superseding disposition instead';
  END IF;
  IF OLD.second_signature_id IS NOT NULL AND NEW.second_signature_id IS DISTINCT FROM OLD.second_signature_id THEN
    RAISE EXCEPTION 'a second signature cannot be replaced';
  END IF;
  RETURN NEW;
END $$;
CREATE TRIGGER dispositions_no_edit BEFORE UPDATE OR DELETE ON dispositions
  FOR EACH ROW EXECUTE FUNCTION dispositions_immutable();

-- One certificate per effective disposition: the PDF bytes, their sha256, and the content they were drawn from.
CREATE TABLE certificates (
  id             serial PRIMARY KEY,
  disposition_id integer NOT NULL UNIQUE REFERENCES dispositions(id),
  lot_id         integer NOT NULL REFERENCES lots(id),
  content        jsonb NOT NULL,
  content_hash   text NOT NULL,
  pdf            bytea NOT NULL,
  sha256         text NOT NULL,
  generated_at   timestamptz NOT NULL
);
CREATE INDEX certificates_lot ON certificates (lot_id, id DESC);

-- Outgoing mail: written in the same transaction as the event, sent later by a pg-boss job with retries.
CREATE TABLE mail_outbox (
  id             serial PRIMARY KEY,
  kind           text NOT NULL CHECK (kind IN ('certificate','alert')),
  recipients     text[] NOT NULL,
  subject        text NOT NULL,
  body           text NOT NULL,
  -- [{ filename, contentType, certificateId }]: attachments are referenced, not copied.
  attachments    jsonb NOT NULL DEFAULT '[]',
  state          text NOT NULL DEFAULT 'queued' CHECK (state IN ('queued','sent','failed','skipped')),
  attempts       integer NOT NULL DEFAULT 0,
  last_error     text,
  message_id     text,
  lot_id         integer REFERENCES lots(id),
  disposition_id integer REFERENCES dispositions(id),
  alert_id       integer,
  created_at     timestamptz NOT NULL DEFAULT now(),
  last_attempt_at timestamptz,
  -- Set while a worker talks to the mail server, so a duplicate job never sends the same message twice.
  sending_until  timestamptz,
  sent_at        timestamptz
);
CREATE INDEX mail_outbox_state ON mail_outbox (state, id);
CREATE INDEX mail_outbox_lot ON mail_outbox (lot_id);

-- What the local SMTP stand-in received (demo and test mode): the raw message and its parsed headers.
CREATE TABLE mail_messages (
  id            serial PRIMARY KEY,
  received_at   timestamptz NOT NULL DEFAULT now(),
  envelope_from text,
  envelope_to   text[] NOT NULL DEFAULT '{}',
  subject       text,
  from_header   text,
  to_header     text,
  message_id    text,
  text_body     text,
  -- [{ index, filename, contentType, size, sha256 }]; the bytes are read back from raw.
  attachments   jsonb NOT NULL DEFAULT '[]',
  raw           bytea NOT NULL
);
CREATE INDEX mail_messages_message_id ON mail_messages (message_id);

-- Supplier alerts for procurement: one live alert per lot, raised to the worst verdict seen.
CREATE TABLE alerts (
  id              serial PRIMARY KEY,
  supplier_id     integer NOT NULL REFERENCES suppliers(id),
  material_id     integer NOT NULL REFERENCES materials(id),
  lot_id          integer NOT NULL REFERENCES lots(id),
  scan_id         integer NOT NULL REFERENCES scans(id),
  severity        text NOT NULL CHECK (severity IN ('high','medium','low')),
  severity_rank   integer NOT NULL,
  verdict         text NOT NULL,
  profile         text,
  findings        jsonb NOT NULL DEFAULT '[]',
  state           text NOT NULL DEFAULT 'open' CHECK (state IN ('open','acknowledged','closed')),
  opened_at       timestamptz NOT NULL DEFAULT now(),
  acknowledged_by integer REFERENCES users(id),
  acknowledged_at timestamptz,
  acknowledge_note text,
  closed_by       integer REFERENCES users(id),
  closed_at       timestamptz,
  close_note      text
);
CREATE UNIQUE INDEX alerts_one_live_per_lot ON alerts (lot_id) WHERE state <> 'closed';
CREATE INDEX alerts_supplier ON alerts (supplier_id, state);
CREATE INDEX alerts_state ON alerts (state, severity_rank DESC, opened_at);
ALTER TABLE mail_outbox ADD CONSTRAINT mail_outbox_alert FOREIGN KEY (alert_id) REFERENCES alerts(id);

-- Supplier status changes: requested by procurement, applied only when a QA manager co-signs.
CREATE TABLE supplier_status_requests (
  id            serial PRIMARY KEY,
  supplier_id   integer NOT NULL REFERENCES suppliers(id),
  from_status   text NOT NULL,
  to_status     text NOT NULL CHECK (to_status IN ('qualified','on-watch','blocked')),
  reason        text NOT NULL CHECK (length(trim(reason)) > 0),
  state         text NOT NULL DEFAULT 'pending' CHECK (state IN ('pending','approved','declined','withdrawn')),
  requested_by  integer NOT NULL REFERENCES users(id),
  requested_at  timestamptz NOT NULL DEFAULT now(),
  signature_id  integer REFERENCES signatures(id),
  decided_by    integer REFERENCES users(id),
  decided_at    timestamptz,
  decision_note text
);
CREATE UNIQUE INDEX supplier_status_one_pending ON supplier_status_requests (supplier_id) WHERE state = 'pending';
`;

export default {
	name: '006-disposition',
	async up(sequelize: Sequelize) {
		await sequelize.query(up);
	},
	async down(sequelize: Sequelize) {
		await sequelize.query(`
			DROP TABLE supplier_status_requests; DROP TABLE mail_outbox; DROP TABLE alerts; DROP TABLE mail_messages;
			DROP TABLE certificates; DROP TABLE dispositions; DROP FUNCTION dispositions_immutable();`);
	}
};
