import type { Sequelize } from 'sequelize';

const up = `
-- Revocable sessions: every session cookie carries the version it was issued under; raising it ends them all.
ALTER TABLE users ADD COLUMN session_version integer NOT NULL DEFAULT 0;
-- A password set by someone else (admin create or reset) is one-time: it must be replaced before anything else, and never signs.
ALTER TABLE users ADD COLUMN password_must_change boolean NOT NULL DEFAULT false;

-- Granting qa or admin takes a second admin: the first records the change here, a different admin approves it.
CREATE TABLE role_change_requests (
  id            serial PRIMARY KEY,
  user_id       integer NOT NULL REFERENCES users(id),
  roles_before  text[] NOT NULL,
  roles_after   text[] NOT NULL
                CHECK (roles_after <@ ARRAY['technician','chemometrician','qa','procurement','admin']::text[]),
  reason        text NOT NULL,
  requested_by  integer NOT NULL REFERENCES users(id),
  requested_at  timestamptz NOT NULL DEFAULT now(),
  state         text NOT NULL DEFAULT 'pending' CHECK (state IN ('pending','approved','declined')),
  decided_by    integer REFERENCES users(id),
  decided_at    timestamptz,
  decision_reason text,
  -- Separation of duties in the schema too: nobody approves their own request, nor a change of their own roles.
  CHECK (decided_by IS NULL OR (decided_by <> requested_by AND decided_by <> user_id)),
  CHECK (requested_by <> user_id),
  CHECK ((state = 'pending') = (decided_by IS NULL))
);
CREATE UNIQUE INDEX role_change_requests_one_pending ON role_change_requests (user_id) WHERE state = 'pending';

-- Shared fixed-window counters for rate limits, so every app process sees the same counts.
CREATE TABLE rate_limits (
  key          text PRIMARY KEY,
  window_start timestamptz NOT NULL,
  hits         integer NOT NULL
);
CREATE INDEX rate_limits_window ON rate_limits (window_start);
`;

const down = `
DROP TABLE rate_limits;
DROP TABLE role_change_requests;
ALTER TABLE users DROP COLUMN password_must_change;
ALTER TABLE users DROP COLUMN session_version;
`;

export default {
	name: '020-sessions-and-duties',
	async up(sequelize: Sequelize) {
		await sequelize.query(up);
	},
	async down(sequelize: Sequelize) {
		await sequelize.query(down);
	}
};
