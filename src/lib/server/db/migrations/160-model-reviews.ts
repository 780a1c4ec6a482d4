import type { Sequelize } from 'sequelize';

// Periodic review of an approved model version (issue 12 §1). A review records its outcome, the reviewer's summary,
// the revalidation triggers seen and the review-by date before and after; the reviewer signs it. A scan screened by a
// version past its review-by date keeps that fact (scans.model_review_overdue), so the lot page, the API and the
// certificate say "model review overdue" for that verdict even after a later review.
const up = `
CREATE TABLE model_reviews (
  id                serial PRIMARY KEY,
  model_version_id  integer NOT NULL REFERENCES model_versions(id),
  outcome           text NOT NULL CHECK (outcome IN ('fit-for-use','revalidate')),
  summary           text NOT NULL,
  triggers          jsonb NOT NULL DEFAULT '[]'::jsonb,
  review_by_before  date,
  review_by_after   date,
  reviewed_by       integer NOT NULL REFERENCES users(id),
  reviewed_at       timestamptz NOT NULL DEFAULT now(),
  signature_id      integer NOT NULL REFERENCES signatures(id)
);
CREATE INDEX model_reviews_version ON model_reviews (model_version_id, id);
ALTER TABLE scans ADD COLUMN model_review_overdue boolean NOT NULL DEFAULT false;
`;

export default {
	name: '160-model-reviews',
	async up(sequelize: Sequelize) {
		await sequelize.query(up);
	},
	async down(sequelize: Sequelize) {
		await sequelize.query('ALTER TABLE scans DROP COLUMN model_review_overdue; DROP TABLE model_reviews;');
	}
};
