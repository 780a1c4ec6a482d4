// Brushing: one selection of spectrum/scan ids shared by every plot and table on a page, passed through context.
import { getContext, setContext } from 'svelte';

const KEY = Symbol('lotgate-selection');

export class Selection {
	/** Replaced, never mutated, so every reader re-runs when it changes. */
	ids = $state<ReadonlySet<string>>(new Set());
	readonly size = $derived(this.ids.size);

	has(id: string): boolean {
		return this.ids.has(id);
	}
	/** Plain click: select only these; with `additive` (shift-click), toggle them into the current selection. */
	pick(ids: Iterable<string>, additive = false) {
		const list = [...ids];
		if (!additive) {
			this.ids = new Set(list);
			return;
		}
		const next = new Set(this.ids);
		for (const id of list) {
			if (next.has(id)) next.delete(id);
			else next.add(id);
		}
		this.ids = next;
	}
	add(ids: Iterable<string>) {
		this.ids = new Set([...this.ids, ...ids]);
	}
	toggle(id: string) {
		this.pick([id], true);
	}
	set(ids: Iterable<string>) {
		this.ids = new Set(ids);
	}
	clear() {
		if (this.ids.size) this.ids = new Set();
	}
	list(): string[] {
		return [...this.ids];
	}
}

/** Call once in the page (or panel) that owns the brushing scope. */
export function provideSelection(selection = new Selection()): Selection {
	return setContext(KEY, selection);
}

/** A plot or table inside a brushing scope gets the shared selection; outside one it gets its own. */
export function useSelection(): Selection {
	return getContext<Selection | undefined>(KEY) ?? new Selection();
}
