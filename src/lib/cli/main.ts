import { readFileSync, writeFileSync } from 'node:fs';
import { basename, extname } from 'node:path';
import { createHash } from 'node:crypto';
import { parseArgs } from 'node:util';
import {
	AnalysisError,
	buildModel,
	parseArtefact,
	isSealed,
	prepareArtefact,
	screen,
	serializeArtefact,
	type AxisUnit,
	type BuildOptions,
	type ModelStats,
	type ScreenResult,
	type SpectrumInput,
	type TrainingSpectrum,
	type NodeOptions,
	type LevelEvidence,
	treeOf,
	walkTree,
	treeDepth,
	describePath
} from '../analysis';
import { identify, type FamilyCandidate } from '../analysis/identify';
import { parseSpectrumFile, SpectrumFileError } from '../spectra';
import { CliError, fileProblem, readSpectraCsv } from './csv';

export interface CliIo {
	stdout: (text: string) => void;
	stderr: (text: string) => void;
}

const defaultIo: CliIo = {
	stdout: (t) => process.stdout.write(t),
	stderr: (t) => process.stderr.write(t)
};

const USAGE = `lotgate: build and apply spectral identity models from files

  lotgate build --train FILE.csv [--class-column NAME] [--id-column NAME] [--genuine NAME] [--node PATH=plsda|knn ...]
                [--recipe STEPS] [--components N|auto] [--family-components N|auto]
                [--alpha 0.05] [--family-alpha 0.01] [--gamma 0.01] [--limits cv|training]
                [--folds 7] [--group-column NAME] [--spe-limit jackson-mudholkar|box|moments]
                [--estimator moments|robust] [--max-components N] [--unit nm|cm-1|um]
                [--meta KEY=VALUE ...] --out MODEL.json
  lotgate screen --model MODEL.json --input FILE.csv|FILE.jdx [FILE ...] [--input ...] [--json] [--unit nm|cm-1|um]
                 [--library OTHER.json ...]

screen takes several files after one --input (e.g. --input dir/*.jdx). A file that cannot be read is reported as
unusable with its reason and the others are still screened. Exit codes: 0 every input screened, 1 file or data
error (e.g. the model), 2 usage error, 3 screened but some inputs were unusable.

CSV: one spectrum per row; columns whose header is a number form the axis (nm unless --unit);
the id column defaults to the first non-numeric column. Recipe steps: range(a,b), gaps(n), snv,
msc, savgol(window,polyorder,deriv), detrend(order), center, autoscale (see docs/methods.md).
Class labels may be paths with "/" between levels (genuine/site-a, diluted/starch, substituted): each node
with children gets one one-class model per child, or a discriminant classifier with --node PATH=plsda|knn.
--library: other materials' models; a not-this-material result then names the material it resembles
(that model's meta.material, set with --meta material=NAME at build, else its file name).
`;

function readBytes(file: string, what: string): Uint8Array {
	try {
		return readFileSync(file);
	} catch (e) {
		throw new CliError(`${file}: cannot read ${what} (${(e as NodeJS.ErrnoException).code ?? (e as Error).message})`);
	}
}

const readText = (file: string, what: string): string => new TextDecoder().decode(readBytes(file, what));

function unitOf(v: string | undefined): AxisUnit {
	if (v === undefined) return 'nm';
	if (v === 'nm' || v === 'cm-1' || v === 'um') return v;
	throw new CliError(`--unit must be nm, cm-1 or um, got "${v}"`);
}

function numberOpt(name: string, v: string | undefined): number | undefined {
	if (v === undefined) return undefined;
	const x = Number(v);
	if (v.trim() === '' || !Number.isFinite(x)) throw new CliError(`--${name} must be a number, got "${v}"`);
	return x;
}

function componentsOpt(name: string, v: string | undefined): number | 'auto' {
	if (v === undefined || v === 'auto') return 'auto';
	const x = Number(v);
	if (!Number.isInteger(x) || x < 1) throw new CliError(`--${name} must be a positive integer or "auto", got "${v}"`);
	return x;
}

function oneOf<T extends string>(name: string, v: string | undefined, allowed: readonly T[]): T | undefined {
	if (v === undefined) return undefined;
	if (!(allowed as readonly string[]).includes(v)) throw new CliError(`--${name} must be one of ${allowed.join(', ')}, got "${v}"`);
	return v as T;
}

function runBuild(args: string[], io: CliIo): number {
	const { values } = parseArgs({
		args,
		strict: true,
		options: {
			train: { type: 'string' },
			'class-column': { type: 'string' },
			'id-column': { type: 'string' },
			genuine: { type: 'string' },
			recipe: { type: 'string' },
			components: { type: 'string' },
			'family-components': { type: 'string' },
			'max-components': { type: 'string' },
			alpha: { type: 'string' },
			'family-alpha': { type: 'string' },
			gamma: { type: 'string' },
			limits: { type: 'string' },
			folds: { type: 'string' },
			'group-column': { type: 'string' },
			'spe-limit': { type: 'string' },
			estimator: { type: 'string' },
			unit: { type: 'string' },
			meta: { type: 'string', multiple: true },
			node: { type: 'string', multiple: true },
			out: { type: 'string' }
		}
	});
	if (!values.train) throw new CliError('build needs --train FILE.csv');
	if (!values.out) throw new CliError('build needs --out MODEL.json');
	const file = values.train;
	const classCol = values['class-column'];
	const groupCol = values['group-column'];
	const table = readSpectraCsv(readBytes(file, 'the training file'), file, {
		unit: unitOf(values.unit),
		idColumn: values['id-column'],
		required: [classCol, groupCol].filter((x): x is string => x !== undefined)
	});
	const training: TrainingSpectrum[] = table.spectra.map((s) => {
		const cls = classCol === undefined ? null : s.meta[classCol];
		if (classCol !== undefined && !cls) throw new CliError(`${file}: line ${s.line}, column "${classCol}": empty class`);
		return { id: s.id, axis: s.axis, values: s.values, unit: s.unit, className: cls, group: groupCol === undefined ? null : s.meta[groupCol] || null };
	});
	const meta: Record<string, string> = { trainingFile: basename(file) };
	for (const kv of values.meta ?? []) {
		const eq = kv.indexOf('=');
		if (eq < 1) throw new CliError(`--meta must be KEY=VALUE, got "${kv}"`);
		meta[kv.slice(0, eq)] = kv.slice(eq + 1);
	}
	const nodes: Record<string, NodeOptions> = {};
	for (const spec of values.node ?? []) {
		const m = /^([^=]+)=(plsda|knn)$/.exec(spec);
		if (!m) throw new CliError(`--node must be PATH=plsda or PATH=knn (e.g. diluted=plsda), got "${spec}"`);
		if (nodes[m[1]]) throw new CliError(`--node names "${m[1]}" twice`);
		nodes[m[1]] = { method: m[2] as 'plsda' | 'knn' };
	}
	const folds = numberOpt('folds', values.folds);
	const maxComponents = numberOpt('max-components', values['max-components']);
	const options: BuildOptions = {
		recipe: values.recipe,
		components: componentsOpt('components', values.components),
		familyComponents: componentsOpt('family-components', values['family-components']),
		maxComponents,
		alpha: numberOpt('alpha', values.alpha),
		familyAlpha: numberOpt('family-alpha', values['family-alpha']),
		gamma: numberOpt('gamma', values.gamma),
		limits: oneOf('limits', values.limits, ['cv', 'training'] as const),
		folds,
		speLimit: oneOf('spe-limit', values['spe-limit'], ['jackson-mudholkar', 'box', 'moments'] as const),
		estimator: oneOf('estimator', values.estimator, ['moments', 'robust'] as const),
		genuine: values.genuine,
		nodes: Object.keys(nodes).length > 0 ? nodes : undefined,
		meta
	};
	for (const k of Object.keys(options) as (keyof BuildOptions)[]) if (options[k] === undefined) delete options[k];
	let artefact;
	try {
		artefact = buildModel(training, options);
	} catch (e) {
		if (e instanceof AnalysisError) {
			// name the CSV line of a spectrum the engine refers to by id
			const m = /training spectrum "([^"]*)"/.exec(e.message);
			const s = m ? table.spectra.find((x) => x.id === m[1]) : undefined;
			throw new CliError(`${file}: ${s ? `line ${s.line}: ` : ''}${e.message}`);
		}
		throw e;
	}
	const text = serializeArtefact(artefact);
	try {
		writeFileSync(values.out, text);
	} catch (e) {
		throw new CliError(`${values.out}: cannot write the model (${(e as NodeJS.ErrnoException).code ?? (e as Error).message})`);
	}
	const parts = [`family A=${artefact.family.components}`, ...artefact.classes.map((c) => `${c} A=${artefact.models[c].components}`)];
	io.stderr(`model written to ${values.out}: ${training.length} spectra, ${artefact.axis.points} points, ${parts.join(', ')}\n`);
	// deeper levels: one line per split
	for (const n of walkTree(treeOf(artefact))) if (n.path.length > 0 && n.split) io.stderr(`  ${n.path.join('/')} (${n.n} spectra): ${n.split.classifier ?? `one-class, ${n.split.components}`}\n`);
	return 0;
}

const statsFields = (s: ModelStats | null) =>
	s === null
		? null
		: { scores: s.scores, t2: s.t2, spe: s.spe, h: s.h, v: s.v, c: s.c, t2Limit: s.t2Limit, speLimit: s.speLimit, cCrit: s.cCrit, cOutlier: s.cOutlier, accepted: s.accepted };

const levelFields = (l: LevelEvidence) => ({
	node: l.node,
	method: l.method,
	children: l.children,
	accepted: l.accepted,
	chosen: l.chosen,
	ambiguous: l.ambiguous,
	reason: l.reason,
	stats: Object.fromEntries(Object.entries(l.stats).map(([k, s]) => [k, statsFields(s)])),
	classifier: l.classifier
});

async function runScreen(args: string[], io: CliIo): Promise<number> {
	const { values } = parseArgs({
		args: expandInputs(args),
		strict: true,
		options: {
			model: { type: 'string' },
			input: { type: 'string', multiple: true },
			json: { type: 'boolean' },
			unit: { type: 'string' },
			'id-column': { type: 'string' },
			library: { type: 'string', multiple: true }
		}
	});
	if (!values.model) throw new CliError('screen needs --model MODEL.json');
	if (!values.input || values.input.length === 0) throw new CliError('screen needs at least one --input FILE');
	const modelText = readText(values.model, 'the model');
	let artefact;
	try {
		artefact = parseArtefact(modelText);
	} catch (e) {
		if (e instanceof AnalysisError) throw new CliError(`${values.model}: ${e.message}`);
		throw e;
	}
	if (!isSealed(artefact))
		process.stderr.write(`${values.model}: schemaVersion 1 has no integrity field; its limits were re-derived from its own data and agree. Rebuild it to seal it.\n`);
	const prep = prepareArtefact(artefact);
	const unit = unitOf(values.unit);
	const libraries: FamilyCandidate[] = (values.library ?? []).map((file) => {
		let other;
		try {
			other = parseArtefact(readText(file, 'the library model'));
		} catch (e) {
			if (e instanceof AnalysisError) throw new CliError(`${file}: ${e.message}`);
			throw e;
		}
		return { material: other.meta.material || basename(file, extname(file)), prepared: prepareArtefact(other) };
	});
	const results: (ScreenResult & { file: string; resembles?: { material: string; ratio: number } | null })[] = [];
	// A file that cannot be read or parsed is reported as unusable with its reason; the rest are still screened.
	const unreadable = (file: string, reason: string): ScreenResult & { file: string } => ({
		id: basename(file),
		verdict: 'unusable',
		profile: null,
		ambiguous: false,
		reason: `the file could not be read: ${reason}`,
		family: null,
		classes: {},
		path: [],
		levels: [],
		file
	});
	for (const file of values.input) {
		const ext = extname(file).toLowerCase();
		let inputs: SpectrumInput[];
		if (ext === '.jdx' || ext === '.dx' || ext === '.jcamp') {
			let bytes: Uint8Array;
			try {
				bytes = readFileSync(file);
			} catch (e) {
				results.push(unreadable(file, `cannot read (${(e as NodeJS.ErrnoException).code ?? (e as Error).message})`));
				continue;
			}
			let parsed: ReturnType<typeof parseSpectrumFile>;
			try {
				parsed = parseSpectrumFile(bytes, basename(file), { allowGaps: true });
			} catch (e) {
				if (!(e instanceof SpectrumFileError)) throw e;
				results.push(unreadable(file, fileProblem(e)));
				continue;
			}
			inputs = parsed.spectra.map((s, k) => ({
				id: s.id ?? s.title ?? (parsed.spectra.length > 1 ? `${basename(file)}#${k + 1}` : basename(file)),
				axis: s.axis,
				values: s.values,
				unit: s.unit
			}));
		} else {
			try {
				inputs = readSpectraCsv(readBytes(file, 'the input'), file, { unit, idColumn: values['id-column'], blankAsNaN: true }).spectra;
			} catch (e) {
				if (!(e instanceof CliError)) throw e;
				results.push(unreadable(file, e.message.startsWith(`${file}: `) ? e.message.slice(file.length + 2) : e.message));
				continue;
			}
		}
		for (const s of inputs) {
			const r = screen(prep, s);
			// identification only for a spectrum its own material's family model rejected
			const resembles = libraries.length > 0 && r.verdict === 'not-this-material' ? { resembles: identify(s, libraries).resembles } : {};
			results.push({ ...r, file, ...resembles });
		}
	}
	const modelVersion = artefact.meta.version ?? `sha256:${createHash('sha256').update(modelText).digest('hex').slice(0, 16)}`;
	if (values.json) {
		const out = {
			modelVersion,
			results: results.map((r) => ({
				id: r.id,
				verdict: r.verdict,
				profile: r.profile,
				ambiguous: r.ambiguous,
				reason: r.reason,
				family: statsFields(r.family),
				classes: Object.fromEntries(Object.entries(r.classes).map(([k, s]) => [k, statsFields(s)])),
				path: r.path,
				levels: r.levels.map(levelFields),
				...('resembles' in r ? { resembles: r.resembles } : {})
			}))
		};
		io.stdout(JSON.stringify(out, (_k, v) => (typeof v === 'number' && !Number.isFinite(v) ? null : v), 2) + '\n');
	} else io.stdout(table(results, artefact.classes, modelVersion, treeDepth(treeOf(artefact)) > 2, libraries.length > 0));
	const unusable = results.filter((r) => r.verdict === 'unusable');
	if (unusable.length) {
		io.stderr(`lotgate: ${unusable.length} of ${results.length} input${results.length === 1 ? ' was' : 's were'} unusable (exit code ${EXIT_UNUSABLE}); the others were screened\n`);
		return EXIT_UNUSABLE;
	}
	return 0;
}

/** Exit code when everything was screened but some inputs (files or spectra) were unusable. */
export const EXIT_UNUSABLE = 3;

/**
 * `--input a.jdx b.jdx c.jdx` (what a shell glob `--input dir/*.jdx` expands to): every word after --input up to the
 * next option is an input, written back as repeated --input for the strict parser.
 */
export function expandInputs(args: string[]): string[] {
	const out: string[] = [];
	let inInputs = false;
	for (const a of args) {
		if (a === '--input') {
			inInputs = true;
			out.push(a);
			continue;
		}
		if (a.startsWith('--input=')) {
			inInputs = true;
			out.push(a);
			continue;
		}
		if (a.startsWith('-')) inInputs = false;
		else if (inInputs && out[out.length - 1] !== '--input') out.push('--input');
		out.push(a);
	}
	return out;
}

const f3 = (x: number | undefined): string => (x === undefined || !Number.isFinite(x) ? '-' : x.toFixed(3));

function table(
	results: (ScreenResult & { file: string; resembles?: { material: string; ratio: number } | null })[],
	classes: string[],
	modelVersion: string,
	showPath: boolean,
	showResembles: boolean
): string {
	const head = ['id', 'verdict', ...(showPath ? ['path'] : []), 'family c/crit', ...classes.map((c) => `${c} c/crit`), ...(showResembles ? ['resembles'] : []), 'note'];
	const rows = results.map((r) => [
		r.id,
		r.verdict === 'suspect' ? `suspect:${r.profile}${r.ambiguous ? ' (ambiguous)' : ''}` : r.verdict,
		...(showPath ? [describePath(r.verdict, r.path, r.levels)] : []),
		r.family ? f3(r.family.c / r.family.cCrit) : '-',
		...classes.map((c) => (r.classes[c] ? `${f3(r.classes[c].c / r.classes[c].cCrit)}${r.classes[c].accepted ? ' accept' : ''}` : '-')),
		...(showResembles ? [r.resembles ? `${r.resembles.material} (${f3(r.resembles.ratio)})` : r.verdict === 'not-this-material' ? 'none' : ''] : []),
		r.reason ?? ''
	]);
	const width = head.map((h, i) => Math.max(h.length, ...rows.map((row) => row[i].length)));
	const line = (cells: string[]) => cells.map((c, i) => (i === cells.length - 1 ? c : c.padEnd(width[i]))).join('  ').trimEnd();
	return [`model ${modelVersion}`, line(head), line(width.map((w) => '-'.repeat(w))), ...rows.map(line)].join('\n') + '\n';
}

/** Runs the command line; returns the exit code (0 ok, 1 data or file error, 2 usage error, 3 some inputs unusable). */
export async function main(argv: string[], io: CliIo = defaultIo): Promise<number> {
	const [command, ...rest] = argv;
	// `lotgate build --help` asks for the usage, not for a build.
	if (rest.includes('--help') || rest.includes('-h')) {
		io.stdout(USAGE);
		return 0;
	}
	try {
		if (command === 'build') return runBuild(rest, io);
		if (command === 'screen') return await runScreen(rest, io);
		if (command === undefined || command === 'help' || command === '--help' || command === '-h') {
			io.stdout(USAGE);
			return command === undefined ? 2 : 0;
		}
		io.stderr(`lotgate: unknown command "${command}"\n\n${USAGE}`);
		return 2;
	} catch (e) {
		if (e instanceof CliError) {
			io.stderr(`lotgate: ${e.message}\n`);
			return 1;
		}
		const code = (e as { code?: string }).code;
		if (typeof code === 'string' && code.startsWith('ERR_PARSE_ARGS')) {
			io.stderr(`lotgate: ${(e as Error).message}\n\n${USAGE}`);
			return 2;
		}
		if (e instanceof AnalysisError) {
			io.stderr(`lotgate: ${e.message}\n`);
			return 1;
		}
		throw e;
	}
}
