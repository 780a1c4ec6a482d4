// Shown on every verdict view and certificate: a screening supports, never replaces, the QA decision.
export const SCREENING_CAUTION =
	'A screening result supports, but does not replace, the site’s approved procedures and the qualified QA decision. Follow local regulations.';
