// Distance and Coomans plot options (issue 17 item 9): decade ticks on log axes, the lot's own points drawn on top,
// and a named legend entry for every group. Chart.js draws datasets from the highest `order` to the lowest, so the
// lowest order lies on top (Chart.js 4 documentation, "Dataset Configuration: order").
import { describe, expect, it } from 'vitest';
import { groupBy, groupedLegend, logAxis, scatterDatasets } from '../../../src/lib/components/charts/chart-kit';

const none = { has: () => false, size: 0 };

describe('log axis', () => {
	it('keeps only whole decades inside the range as ticks, written 0.1, 1, 10, 100', () => {
		const axis = logAxis('h / h0');
		const scale = { min: 0.05, max: 466, ticks: [2, 3, 4, 5].map((value) => ({ value })) };
		axis.afterBuildTicks(scale);
		expect(scale.ticks.map((t) => t.value)).toEqual([0.1, 1, 10, 100]);
		expect(scale.ticks.map((t) => axis.ticks.callback(t.value))).toEqual(['0.1', '1', '10', '100']);
		expect(axis.ticks.autoSkip).toBe(true);
	});
	it('keeps Chart.js ticks within one decade, written plainly', () => {
		const axis = logAxis('c');
		const scale = { min: 2, max: 9, ticks: [2, 5, 9].map((value) => ({ value })) };
		axis.afterBuildTicks(scale);
		expect(scale.ticks.map((t) => t.value)).toEqual([2, 5, 9]);
		expect(axis.ticks.callback(5)).toBe('5.00');
	});
});

describe('scatter datasets', () => {
	const items = [
		{ id: 't1', x: 1, y: 1 },
		{ id: 't2', x: 2, y: 2 },
		{ id: 's9', x: 3, y: 3 }
	];
	const meta = { t1: { class: 'genuine' }, t2: { class: 'genuine' }, s9: { class: 'genuine' } };

	it('puts the front ids in a dataset of their own with the lowest order, sharing the group legend entry', () => {
		const ds = scatterDatasets(groupBy(items, meta, 'class'), none, new Set(['s9']));
		expect(ds.map((d) => [d.label, d.order, d.legendShadow, d.data.map((p) => p.id)])).toEqual([
			['genuine', 1, false, ['t1', 't2']],
			['genuine', 0, true, ['s9']]
		]);
		const filter = groupedLegend.labels.filter;
		expect(ds.map((_, i) => filter({ datasetIndex: i }, { datasets: ds }))).toEqual([true, false]);
	});

	it('does not fade front points while something else is selected', () => {
		const selection = { has: (id: string) => id === 't1', size: 1 };
		const [behind, ahead] = scatterDatasets(groupBy(items, meta, 'class'), selection, new Set(['s9']));
		expect(behind.backgroundColor({ raw: { id: 't2' } })).toMatch(/33$/); // faded
		expect(ahead.backgroundColor({ raw: { id: 's9' } })).toMatch(/ee$/); // not faded
	});

	it('names every group: points without the field are "no <field>", listed last', () => {
		const groups = groupBy(items, { t1: { verdict: 'genuine' }, t2: {}, s9: { verdict: 'suspect' } }, 'verdict');
		expect(groups.map((g) => g.key)).toEqual(['genuine', 'suspect', 'no verdict']);
	});

	it('legend click shows or hides every dataset of the group', () => {
		const visible = [true, true, true];
		const chart = {
			data: { datasets: [{ label: 'genuine' }, { label: 'genuine' }, { label: 'suspect' }] },
			isDatasetVisible: (i: number) => visible[i],
			setDatasetVisibility: (i: number, v: boolean) => (visible[i] = v),
			update: () => {}
		};
		groupedLegend.onClick(null, { text: 'genuine' }, { chart });
		expect(visible).toEqual([false, false, true]);
	});
});
