// Browser helpers of the spectrum uploader: filename mapping, one XMLHttpRequest per file with progress, server messages.

export interface MappingOption {
	value: string;
	label: string;
}

/** The first capture group of `pattern` in the file name (case-insensitive), or null; a bad pattern returns an error. */
export function matchTarget(fileName: string, pattern: string): { value: string | null; error: string | null } {
	if (!pattern.trim()) return { value: null, error: null };
	let re: RegExp;
	try {
		re = new RegExp(pattern, 'i');
	} catch (e) {
		return { value: null, error: `This is not a valid pattern: ${(e as Error).message}` };
	}
	const m = re.exec(fileName);
	if (!m) return { value: null, error: null };
	return { value: (m[1] ?? m[0]).trim(), error: null };
}

/**
 * A matched text as one of the options when it names one (a container "04" is option "4"), else the text itself.
 * Numbers compare by value, names case-insensitively.
 */
export function resolveOption(text: string | null, options: MappingOption[] | undefined): string {
	if (text == null) return '';
	if (!options?.length) return /^\d+$/.test(text) ? String(Number(text)) : text;
	const hit = options.find((o) => o.value.toLowerCase() === text.toLowerCase() || (/^\d+$/.test(text) && /^\d+$/.test(o.value) && Number(o.value) === Number(text)));
	return hit?.value ?? '';
}

export interface UploadOutcome {
	status: number;
	body: unknown;
}

/** POSTs one file as multipart with the extra fields; reports upload progress (0..1). Network failures resolve with status 0. */
export function sendFile(
	endpoint: string,
	file: File,
	fileField: string,
	fields: Record<string, string>,
	onProgress: (loaded: number, total: number) => void
): { done: Promise<UploadOutcome>; abort: () => void } {
	const xhr = new XMLHttpRequest();
	const done = new Promise<UploadOutcome>((resolve) => {
		const form = new FormData();
		for (const [k, v] of Object.entries(fields)) if (v !== '' && v != null) form.append(k, v);
		form.append(fileField, file, file.name);
		xhr.open('POST', endpoint);
		xhr.setRequestHeader('accept', 'application/json');
		xhr.upload.onprogress = (e) => onProgress(e.loaded, e.lengthComputable ? e.total : file.size);
		xhr.onload = () => {
			let body: unknown = null;
			try {
				body = JSON.parse(xhr.responseText);
			} catch {
				body = { error: { message: xhr.responseText.slice(0, 300) || `HTTP ${xhr.status}` } };
			}
			resolve({ status: xhr.status, body });
		};
		xhr.onerror = () => resolve({ status: 0, body: { error: { message: 'The connection to the server failed; check the network and try again' } } });
		xhr.onabort = () => resolve({ status: 0, body: { error: { message: 'Upload cancelled' } } });
		xhr.send(form);
	});
	return { done, abort: () => xhr.abort() };
}

/** The server's message for a refused upload, in the shared error shape (also per file for a batch answer). */
export function errorText(outcome: UploadOutcome): string {
	const b = outcome.body as { error?: { message?: string }; files?: { error?: { message?: string } }[] } | null;
	const perFile = b?.files?.find((f) => f.error)?.error?.message;
	if (perFile) return perFile;
	if (b?.error?.message) return b.error.message;
	if (outcome.status === 413) return 'The file is larger than the server accepts';
	return `The server refused the upload (HTTP ${outcome.status})`;
}

/** A short success line; endpoints with their own answer pass `describe`. */
export function defaultDescribe(body: unknown): string {
	const b = body as { files?: { id?: number; points?: number; spectra?: unknown[] }[]; id?: number } | null;
	const f = b?.files?.[0];
	if (f?.id != null) return f.spectra?.length ? `stored as ${f.spectra.length} spectra (first: #${f.id})` : `stored as spectrum #${f.id}, ${f.points} points`;
	if (b?.id != null) return `stored (#${b.id})`;
	return 'stored';
}

export const formatBytes = (n: number) => (n >= 1048576 ? `${(n / 1048576).toFixed(1)} MB` : n >= 1024 ? `${Math.round(n / 1024)} kB` : `${n} B`);
