import { describe, expect, it } from 'vitest';
import { readMultipart } from '../../../src/lib/server/multipart';

function request(parts: { name: string; file?: string; bytes?: Uint8Array; value?: string }[], chunked = false) {
	const form = new FormData();
	for (const p of parts) {
		if (p.file) form.append(p.name, new Blob([Buffer.from(p.bytes ?? new Uint8Array())]), p.file);
		else form.append(p.name, p.value ?? '');
	}
	const r = new Request('http://127.0.0.1/upload', { method: 'POST', body: form });
	if (!chunked) return r;
	// The same body, delivered in 1 KB pieces, as a slow client would send it.
	const type = r.headers.get('content-type')!;
	return r.arrayBuffer().then((buf) => {
		const bytes = new Uint8Array(buf);
		const body = new ReadableStream<Uint8Array>({
			start(c) {
				for (let i = 0; i < bytes.length; i += 1024) c.enqueue(bytes.slice(i, i + 1024));
				c.close();
			}
		});
		return new Request('http://127.0.0.1/upload', { method: 'POST', body, headers: { 'content-type': type }, duplex: 'half' } as RequestInit);
	});
}

describe('readMultipart (streamed, bounded)', () => {
	it('returns fields and files in order, each hashed while streaming', async () => {
		const big = new Uint8Array(200_000).map((_, i) => (i * 7) % 251);
		const form = await readMultipart(await request([{ name: 'container', value: '3' }, { name: 'file', file: 'abc.txt', bytes: new TextEncoder().encode('abc') }, { name: 'file', file: 'big.bin', bytes: big }], true), { fileBytes: 1 << 20, files: 5 });
		expect(form.field('container')).toBe('3');
		expect(form.field('missing')).toBeNull();
		expect(form.files.map((f) => [f.name, f.size, f.tooLarge])).toEqual([['abc.txt', 3, false], ['big.bin', 200_000, false]]);
		// FIPS 180-2, appendix B.1: SHA-256("abc").
		expect(form.files[0].sha256).toBe('ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad');
		expect(Buffer.compare(Buffer.from(form.files[1].bytes), Buffer.from(big))).toBe(0);
	});

	it('refuses the whole request with 413 naming the file as soon as it crosses the per-file limit', async () => {
		const req = await request([{ name: 'file', file: 'huge.jdx', bytes: new Uint8Array(50_000) }], true);
		await expect(readMultipart(req, { fileBytes: 10_000, files: 1 })).rejects.toMatchObject({ status: 413, code: 'too-large', message: expect.stringContaining('huge.jdx') });
	});

	it('in a batch, drops an oversized file as it arrives and still reads the others', async () => {
		const req = await request([{ name: 'file', file: 'a.csv', bytes: new Uint8Array(100).fill(49) }, { name: 'file', file: 'huge.csv', bytes: new Uint8Array(50_000).fill(50) }, { name: 'file', file: 'b.csv', bytes: new Uint8Array(10).fill(51) }]);
		const form = await readMultipart(req, { fileBytes: 10_000, files: 5, oversize: 'mark' });
		expect(form.files.map((f) => [f.name, f.tooLarge, f.bytes.length])).toEqual([['a.csv', false, 100], ['huge.csv', true, 0], ['b.csv', false, 10]]);
	});

	it('answers 400 for too many files, 415 for a body that is not multipart, 400 for a broken body', async () => {
		const three = await request([1, 2, 3].map((i) => ({ name: 'file', file: `${i}.csv`, bytes: new Uint8Array([48 + i]) })));
		await expect(readMultipart(three, { fileBytes: 1000, files: 2 })).rejects.toMatchObject({ status: 400, code: 'too-many-files' });
		const json = new Request('http://127.0.0.1/upload', { method: 'POST', body: '{}', headers: { 'content-type': 'application/json' } });
		await expect(readMultipart(json, { fileBytes: 1000, files: 2 })).rejects.toMatchObject({ status: 415 });
		const broken = new Request('http://127.0.0.1/upload', { method: 'POST', body: '--xyz\r\nContent-Disposition: form-data; name="file"; filename="a"\r\n\r\nabc', headers: { 'content-type': 'multipart/form-data; boundary=xyz' } });
		await expect(readMultipart(broken, { fileBytes: 1000, files: 2 })).rejects.toMatchObject({ status: 400, code: 'bad-multipart' });
	});
});
