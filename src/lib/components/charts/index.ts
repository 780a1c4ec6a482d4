// Evidence plots (Chart.js). Each component documents its props at the top of its file.
export { default as DistancePlot } from './DistancePlot.svelte';
export { default as ScorePlot } from './ScorePlot.svelte';
export { default as LoadingsPlot } from './LoadingsPlot.svelte';
export { default as VarianceCurves } from './VarianceCurves.svelte';
export { default as CoomansPlot } from './CoomansPlot.svelte';
export { default as SpectraOverlay } from './SpectraOverlay.svelte';
export { default as ContributionBars } from './ContributionBars.svelte';
export { default as ChartFrame } from './ChartFrame.svelte';
export { Selection, provideSelection, useSelection } from './selection.svelte';
export { colorKeysFor, type PointMeta } from './chart-kit';
