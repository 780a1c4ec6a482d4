// Which lines of the build's output are third-party noise that `npm start` hides: warnings the bundlers raise about
// code inside node_modules (rewritten `this`, circular imports between a package's own files, Node built-ins a
// package imports for the browser bundle), SvelteKit's empty env chunk, and the adapter's "preview" hint (start
// serves the build itself). Anything about our own sources, and every error, is kept. `npm run build` shows all.

/** @param {string} line one line of build output, without its line break */
export function isThirdPartyNoise(line) {
	const text = line.replace(/\x1b\[[0-9;]*m/g, '').trim(); // colour codes
	if (!text) return false;
	if (/\berror\b/i.test(text) && !/^node_modules\//.test(text)) return false;
	// rollup, as adapter-node bundles the server: "node_modules/pkg/file.js (1:30): The 'this' keyword is …"
	if (/^node_modules\/\S+ \(\d+:\d+\): /.test(text)) return true;
	// a cycle that lies wholly inside packages
	if (/^Circular dependency: /.test(text)) return text.slice('Circular dependency: '.length).split(' -> ').every((p) => p.startsWith('node_modules/'));
	// vite's resolver: a package imports a Node built-in that the browser bundle cannot have
	if (/^\[plugin [^\]]+\] Module "[^"]+" has been externalized for browser compatibility, imported by "[^"]*\/node_modules\//.test(text)) return true;
	if (/^Generated an empty chunk: "chunks\/env\.js"\.?$/.test(text)) return true;
	if (text === 'Run npm run preview to preview your production build locally.') return true;
	return false;
}

/**
 * A line filter for a whole build run: the single-line noise above, and rolldown's plugin-timing report (printed only
 * when the machine is slow), a block from its "[PLUGIN_TIMINGS]" line to its closing "See https://rolldown.rs…" line.
 * Answers true for a line to hide.
 */
export function noiseFilter() {
	let inTimings = false;
	return (/** @type {string} */ line) => {
		const text = line.replace(/\x1b\[[0-9;]*m/g, '').trim();
		if (text.startsWith('[PLUGIN_TIMINGS]')) inTimings = true;
		if (inTimings) {
			if (/^See https:\/\/rolldown\.rs\/\S*bundlertimings/.test(text)) inTimings = false;
			return true;
		}
		return isThirdPartyNoise(line);
	};
}
