import type { Sequelize } from 'sequelize';

const up = `
CREATE TABLE users (
  id            serial PRIMARY KEY,
  email         text NOT NULL UNIQUE CHECK (email = lower(email)),
  name          text NOT NULL,
  password_hash text NOT NULL,
  roles         text[] NOT NULL DEFAULT '{}'
                CHECK (roles <@ ARRAY['technician','chemometrician','qa','procurement','admin']::text[]),
  active        boolean NOT NULL DEFAULT true,
  locked_until  timestamptz,
  password_changed_at timestamptz NOT NULL DEFAULT now(),
  created_at    timestamptz NOT NULL DEFAULT now()
);

-- Failed sign-ins and signature attempts, counted in a sliding window for the lockout.
CREATE TABLE login_failures (
  id         bigserial PRIMARY KEY,
  email      text NOT NULL,
  at         timestamptz NOT NULL DEFAULT now(),
  context    text NOT NULL DEFAULT 'sign-in'
);
CREATE INDEX login_failures_email_at ON login_failures (email, at);

CREATE TABLE suppliers (
  id         serial PRIMARY KEY,
  code       text NOT NULL UNIQUE,
  name       text NOT NULL,
  contacts   text[] NOT NULL DEFAULT '{}',
  status     text NOT NULL DEFAULT 'qualified' CHECK (status IN ('qualified','on-watch','blocked')),
  created_at timestamptz NOT NULL DEFAULT now()
);

CREATE TABLE materials (
  id              serial PRIMARY KEY,
  code            text NOT NULL UNIQUE,
  name            text NOT NULL,
  technique       text NOT NULL CHECK (technique IN ('NIR','Raman','mid-IR')),
  sampling_policy text NOT NULL DEFAULT 'every-container' CHECK (sampling_policy IN ('every-container','reduced-allowed')),
  sampling_justification text,
  recipients      text[] NOT NULL DEFAULT '{}',
  created_at      timestamptz NOT NULL DEFAULT now()
);

CREATE TABLE material_classes (
  id          serial PRIMARY KEY,
  material_id integer NOT NULL REFERENCES materials(id),
  name        text NOT NULL CHECK (name ~ '^[a-z0-9][a-z0-9-]*$'),
  kind        text NOT NULL CHECK (kind IN ('genuine','suspect')),
  description text NOT NULL DEFAULT '',
  UNIQUE (material_id, name)
);
CREATE UNIQUE INDEX one_genuine_class_per_material ON material_classes (material_id) WHERE kind = 'genuine';

CREATE TABLE instruments (
  id                serial PRIMARY KEY,
  name              text NOT NULL UNIQUE,
  technique         text NOT NULL CHECK (technique IN ('NIR','Raman','mid-IR')),
  serial            text NOT NULL,
  axis_unit         text NOT NULL CHECK (axis_unit IN ('nm','cm-1','um')),
  qualification_due date NOT NULL,
  active            boolean NOT NULL DEFAULT true,
  created_at        timestamptz NOT NULL DEFAULT now()
);

CREATE TABLE instrument_tokens (
  id            serial PRIMARY KEY,
  instrument_id integer NOT NULL REFERENCES instruments(id),
  label         text NOT NULL,
  prefix        text NOT NULL,
  token_hash    text NOT NULL UNIQUE,
  created_by    integer NOT NULL REFERENCES users(id),
  created_at    timestamptz NOT NULL DEFAULT now(),
  revoked_at    timestamptz
);

-- Every stored spectrum, library or lot: raw bytes kept byte for byte, parsed values beside them.
CREATE TABLE spectra (
  id            bigserial PRIMARY KEY,
  sha256        text NOT NULL,
  raw           bytea NOT NULL,
  file_name     text NOT NULL,
  format        text NOT NULL,
  row_index     integer NOT NULL DEFAULT 0,
  points        integer NOT NULL,
  axis          float8[] NOT NULL,
  intensities   float8[] NOT NULL,
  unit          text NOT NULL CHECK (unit IN ('nm','cm-1','um')),
  y_unit        text,
  title         text,
  technique     text,
  acquired_at   timestamptz,
  meta          jsonb NOT NULL DEFAULT '{}',
  instrument_id integer REFERENCES instruments(id),
  uploaded_by   integer REFERENCES users(id),
  context       text NOT NULL DEFAULT 'loose' CHECK (context IN ('loose','library','lot')),
  context_id    integer,
  created_at    timestamptz NOT NULL DEFAULT now()
);
CREATE INDEX spectra_sha256 ON spectra (sha256);
CREATE UNIQUE INDEX spectra_unique_in_context ON spectra (context, coalesce(context_id, 0), sha256, row_index);

CREATE TABLE audit_events (
  id          bigserial PRIMARY KEY,
  at          timestamptz NOT NULL,
  actor_id    integer REFERENCES users(id),
  actor_label text NOT NULL,
  action      text NOT NULL,
  entity      text NOT NULL,
  entity_id   text,
  before      jsonb,
  after       jsonb,
  reason      text,
  request_id  text,
  prev_hash   text NOT NULL,
  hash        text NOT NULL UNIQUE
);
CREATE INDEX audit_events_entity ON audit_events (entity, entity_id);
CREATE INDEX audit_events_actor ON audit_events (actor_id);
CREATE INDEX audit_events_at ON audit_events (at);

CREATE FUNCTION audit_events_append_only() RETURNS trigger LANGUAGE plpgsql AS $$
BEGIN
  RAISE EXCEPTION 'audit_events is append-only: % refused', TG_OP;
END $$;
CREATE TRIGGER audit_events_no_update BEFORE UPDATE OR DELETE ON audit_events
  FOR EACH ROW EXECUTE FUNCTION audit_events_append_only();
CREATE TRIGGER audit_events_no_truncate BEFORE TRUNCATE ON audit_events
  FOR EACH STATEMENT EXECUTE FUNCTION audit_events_append_only();
`;

export default {
	name: '001-foundation',
	async up(sequelize: Sequelize) {
		await sequelize.query(up);
	},
	async down() {
		throw new Error('001-foundation cannot be rolled back: audit records are kept for the life of the data');
	}
};
