// A table row that selects its scan or spectrum in the page's shared brushing selection, the same way a plot point
// does: a plain click (or Enter) selects only this row, Shift-click (or Shift+Enter) and Space toggle it into the
// selection. Rows are focusable so the keyboard reaches them; clicks on a control inside the row (its checkbox, a
// button, a link, a disclosure) keep their own meaning.
import type { Selection } from '$lib/components/charts/selection.svelte';

const CONTROLS = 'input, button, a, select, textarea, label, summary, details';

/** Whether an event started on a control inside the row, which then handles it itself. */
function fromControl(event: Event): boolean {
	const target = event.target as Element | null;
	const row = event.currentTarget as Element | null;
	const control = target?.closest?.(CONTROLS);
	return !!control && !!row && row.contains(control) && control !== row;
}

/** What a click or key press on a row does to the selection: 'only' this row, 'toggle' it, or nothing. */
export function rowAction(input: { kind: 'click'; shift: boolean } | { kind: 'key'; key: string; shift: boolean }): 'only' | 'toggle' | null {
	if (input.kind === 'click') return input.shift ? 'toggle' : 'only';
	if (input.key === ' ' || input.key === 'Spacebar') return 'toggle';
	if (input.key === 'Enter') return input.shift ? 'toggle' : 'only';
	return null;
}

/** Props to spread on a `<tr>`: focusable, selects its id on click, Enter and Space. */
export function selectableRow(selection: Selection, id: string | null | undefined) {
	if (id == null) return {};
	const apply = (action: 'only' | 'toggle' | null) => {
		if (action === 'only') selection.pick([id]);
		else if (action === 'toggle') selection.toggle(id);
	};
	return {
		tabindex: 0,
		'data-selectable': '',
		onclick: (event: MouseEvent) => {
			if (fromControl(event)) return;
			apply(rowAction({ kind: 'click', shift: event.shiftKey }));
		},
		onkeydown: (event: KeyboardEvent) => {
			if (fromControl(event) || event.target !== event.currentTarget) return;
			const action = rowAction({ kind: 'key', key: event.key, shift: event.shiftKey });
			if (!action) return;
			event.preventDefault(); // Space would scroll the page
			apply(action);
		}
	};
}
