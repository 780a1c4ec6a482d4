import type { Sequelize } from 'sequelize';

// The audit chain becomes an HMAC chain keyed outside the database. Rows already written keep their plain SHA-256;
// audit_chain records where that unkeyed prefix ends, and every checkpoint repeats it, so moving it is detected.
const up = `
CREATE TABLE audit_chain (
  id           smallint PRIMARY KEY CHECK (id = 1),
  legacy_until bigint NOT NULL,
  keyed_since  timestamptz NOT NULL DEFAULT now()
);
INSERT INTO audit_chain (id, legacy_until) SELECT 1, coalesce(max(id), 0) FROM audit_events;
CREATE TRIGGER audit_chain_no_update BEFORE UPDATE OR DELETE ON audit_chain
  FOR EACH ROW EXECUTE FUNCTION audit_events_append_only();
CREATE TRIGGER audit_chain_no_truncate BEFORE TRUNCATE ON audit_chain
  FOR EACH STATEMENT EXECUTE FUNCTION audit_events_append_only();

-- Checkpoints are mailed to an archive address through the same outbox.
ALTER TABLE mail_outbox DROP CONSTRAINT IF EXISTS mail_outbox_kind_check;
ALTER TABLE mail_outbox ADD CONSTRAINT mail_outbox_kind_check CHECK (kind IN ('certificate','alert','audit-checkpoint'));
`;

export default {
	name: '010-audit-anchor',
	async up(sequelize: Sequelize) {
		await sequelize.query(up);
	},
	async down() {
		throw new Error('010-audit-anchor cannot be rolled back: the keyed chain would no longer verify');
	}
};
