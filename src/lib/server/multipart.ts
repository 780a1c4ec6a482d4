// Streamed multipart/form-data (busboy): the per-file, file-count and field limits are enforced while the bytes arrive,
// each file's SHA-256 is computed on the same pass, and each file is held once, as one buffer, for the parser. Nothing
// is decoded here; the spectrum parser decodes each file once.
import busboy from 'busboy';
import { createHash } from 'node:crypto';
import { Readable } from 'node:stream';
import type { ReadableStream as NodeReadableStream } from 'node:stream/web';
import { ServiceError } from './services/errors';
import { streamedTooLargeMessage } from './upload-limits';

export interface StreamedFile {
	field: string;
	name: string;
	bytes: Uint8Array;
	size: number;
	/** SHA-256 of the raw bytes, hex, computed while they streamed in. */
	sha256: string;
	/** Over `fileBytes`: its bytes were dropped as they arrived (bytes is empty); the caller refuses it by name. */
	tooLarge: boolean;
}

export interface MultipartLimits {
	/** Bytes per file. A larger file is dropped as soon as the limit is crossed: with `oversize: 'refuse-request'` the
	 * whole request stops with 413; with 'mark' (batches) the file is returned as `tooLarge` and the others are read. */
	fileBytes: number;
	oversize?: 'refuse-request' | 'mark';
	/** Files per request. */
	files: number;
	/** Bytes per text field (default 64 KB) and number of text fields (default 50). */
	fieldBytes?: number;
	fields?: number;
}

export interface Multipart {
	files: StreamedFile[];
	field(name: string): string | null;
}

// busboy refuses a part header holding a control character (NUL, BEL, …) as "Malformed part header". Browsers and
// FormData put the file name there unescaped, so that is the usual cause: name it as the file name problem it is.
const badBody = (e: Error) =>
	e?.message === 'Malformed part header'
		? new ServiceError(400, 'invalid-file-name', 'A part header holds a control character, usually in the file name; rename the file', 'file')
		: new ServiceError(400, 'bad-multipart', `The multipart body could not be read (${e?.message ?? e})`, 'file');

/**
 * Reads a multipart body as it streams. Errors: 415 when the body is not multipart, 413 `too-large` naming the file
 * (stops reading at once), 400 `too-many-files`, 400 `invalid-file-name` for a control character in a part header, 400 `bad-multipart` for any
 * other malformed body.
 */
export async function readMultipart(request: Request, limits: MultipartLimits): Promise<Multipart> {
	const type = request.headers.get('content-type') ?? '';
	if (!type.toLowerCase().startsWith('multipart/form-data')) throw new ServiceError(415, 'unsupported-media-type', 'Send multipart/form-data');
	if (!request.body) throw new ServiceError(400, 'bad-multipart', 'The multipart body is empty', 'file');
	const fieldBytes = limits.fieldBytes ?? 64 * 1024;
	let parser: busboy.Busboy;
	try {
		parser = busboy({
			headers: { 'content-type': type },
			defParamCharset: 'utf8',
			limits: { fileSize: limits.fileBytes, files: limits.files, fieldSize: fieldBytes, fields: limits.fields ?? 50, parts: limits.files + (limits.fields ?? 50) }
		});
	} catch (e) {
		throw new ServiceError(400, 'bad-multipart', `The multipart body could not be read (${(e as Error).message})`, 'file');
	}
	const source = Readable.fromWeb(request.body as unknown as NodeReadableStream<Uint8Array>);
	const files: StreamedFile[] = [];
	const fields = new Map<string, string>();
	const pending: Promise<void>[] = [];

	return new Promise<Multipart>((resolve, reject) => {
		let failed = false;
		const fail = (error: unknown) => {
			if (failed) return;
			failed = true;
			source.unpipe(parser);
			source.destroy();
			reject(error);
		};
		parser.on('file', (field, stream, info) => {
			const name = info.filename || 'upload';
			const hash = createHash('sha256');
			const chunks: Buffer[] = [];
			let size = 0;
			let over = false;
			pending.push(
				new Promise<void>((done) => {
					stream.on('data', (chunk: Buffer) => {
						if (over) return;
						hash.update(chunk);
						chunks.push(chunk);
						size += chunk.length;
					});
					stream.on('limit', () => {
						over = true;
						chunks.length = 0;
						if (limits.oversize !== 'mark') fail(new ServiceError(413, 'too-large', streamedTooLargeMessage(name, limits.fileBytes), 'file'));
					});
					stream.on('error', (e: Error) => {
						fail(badBody(e));
						done();
					});
					stream.on('end', () => {
						if (!failed) {
							// One buffer per file: a single chunk is used as it is, several are joined once.
							const bytes = over ? Buffer.alloc(0) : chunks.length === 1 ? chunks[0] : Buffer.concat(chunks, size);
							chunks.length = 0;
							files.push({ field, name, bytes, size, sha256: hash.digest('hex'), tooLarge: over });
						}
						done();
					});
				})
			);
		});
		parser.on('field', (name, value, info) => {
			if (info.valueTruncated) return fail(new ServiceError(400, 'field-too-large', `The field "${name}" is longer than ${fieldBytes} bytes`, name));
			if (!fields.has(name)) fields.set(name, value);
		});
		parser.on('filesLimit', () => fail(new ServiceError(400, 'too-many-files', `More than ${limits.files} files in one upload: send them in smaller batches`, 'file')));
		parser.on('fieldsLimit', () => fail(new ServiceError(400, 'bad-multipart', 'Too many fields in the multipart body', 'file')));
		parser.on('partsLimit', () => fail(new ServiceError(400, 'bad-multipart', 'Too many parts in the multipart body', 'file')));
		parser.on('error', (e: Error) => fail(badBody(e)));
		source.on('error', (e: Error) => {
			// The hook's byte counter stops a body over the route's limit while it streams.
			if (e?.name === 'BodyTooLarge') fail(new ServiceError(413, 'too-large', 'The upload is larger than this address accepts', 'file'));
			else fail(new ServiceError(400, 'bad-multipart', `The upload was interrupted (${e?.message ?? e})`, 'file'));
		});
		parser.on('close', () => {
			void Promise.all(pending).then(() => {
				if (failed) return;
				// Files in the order they were sent.
				resolve({ files, field: (n) => fields.get(n) ?? null });
			});
		});
		source.pipe(parser);
	});
}
