// Loading a stored model artefact for screening: every load (and so every cache fill) checks that the artefact is
// the one that was built and approved, before any spectrum is screened with it.
//   1. its shape, its own integrity field and every derivable limit (the engine's validateArtefact);
//   2. the SHA-256 of its canonical text against `artefact_sha256`, recorded at build time and bound into the
//      approval signature.
// A refusal is a 409 naming the version and the check; nothing is screened and nothing is stored.
import { createHash } from 'node:crypto';
import { AnalysisError, prepareArtefact, serializeArtefact, type ModelArtefact, type PreparedArtefact } from '../../analysis';
import { ServiceError } from './errors';

export class ArtefactRefused extends ServiceError {
	constructor(label: string, detail: string) {
		super(409, 'artefact-refused', `${label} cannot screen: ${detail}. Nothing was screened with it; ask the chemometrician and QA to investigate and rebuild the version.`);
	}
}

/** Verifies a stored artefact (see the header) and returns it prepared for screening. */
export function prepareStored(label: string, artefact: unknown, recordedSha256: string | null): PreparedArtefact {
	if (!artefact || typeof artefact !== 'object') throw new ArtefactRefused(label, 'the stored artefact is missing');
	let prepared: PreparedArtefact;
	try {
		// a fresh object per database read: prepareArtefact's per-object cache misses, so validation runs on every load
		prepared = prepareArtefact(artefact as ModelArtefact);
	} catch (e) {
		if (e instanceof AnalysisError) throw new ArtefactRefused(label, e.message);
		throw e;
	}
	const sha = createHash('sha256').update(serializeArtefact(prepared.artefact)).digest('hex');
	if (!recordedSha256 || sha !== recordedSha256)
		throw new ArtefactRefused(label, `the stored artefact's SHA-256 (${sha.slice(0, 16)}…) differs from the one recorded when it was built (${(recordedSha256 ?? 'none').slice(0, 16)}…)`);
	return prepared;
}
