// Dispositions: the QA home queue of releases waiting for a second signature.
import { type Actor } from '../actor';
import { awaitingSecond } from './read';

/** QA home queue: releases waiting for a second signature; the first signer sees theirs as waiting for someone else. */
export async function queueItems(actor: Actor) {
	return (await awaitingSecond()).map((p) => {
		const mine = p.signer_id === actor.id;
		return {
			key: `disposition:${p.id}`,
			internalLot: p.internal_lot,
			href: `/lots/${p.internal_lot}`,
			label: mine ? `${p.internal_lot} · your release waits for a second signature` : `${p.internal_lot} · release needs a second signature`,
			detail: mine ? 'waiting for a second signature by another QA user' : `first signed by ${p.signer_name}`
		};
	});
}
