// The local SMTP stand-in for demo and test mode: listens on loopback only and stores every message it receives,
// raw and parsed, in mail_messages. It uses its own small pg pool (no app modules), so scripts can start it.
import { createHash } from 'node:crypto';
import type { AddressInfo } from 'node:net';
import { simpleParser, type AddressObject } from 'mailparser';
import pg from 'pg';
import { SMTPServer } from 'smtp-server';

export interface SmtpFake {
	port: number;
	url: string;
	close(): Promise<void>;
}

const MAX_MESSAGE_BYTES = 25 * 1024 * 1024;

function addressText(a: AddressObject | AddressObject[] | undefined): string | null {
	if (!a) return null;
	return (Array.isArray(a) ? a : [a]).map((x) => x.text).join(', ');
}

/** Parses and stores one received message; exported so the inbox and tests share one definition. */
export async function storeMessage(pool: pg.Pool, raw: Buffer, envelope: { from: string | null; to: string[] }) {
	const parsed = await simpleParser(raw);
	const attachments = parsed.attachments.map((a, index) => ({
		index,
		filename: a.filename ?? `attachment-${index + 1}`,
		contentType: a.contentType,
		size: a.size,
		sha256: createHash('sha256').update(a.content).digest('hex')
	}));
	await pool.query(
		`INSERT INTO mail_messages (envelope_from, envelope_to, subject, from_header, to_header, message_id, text_body, attachments, raw)
		 VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9)`,
		[envelope.from, envelope.to, parsed.subject ?? null, addressText(parsed.from), addressText(parsed.to), parsed.messageId ?? null, parsed.text ?? null, JSON.stringify(attachments), raw]
	);
}

export async function startSmtpFake(options: { databaseUrl: string; port?: number }): Promise<SmtpFake> {
	const pool = new pg.Pool({ connectionString: options.databaseUrl, max: 2 });
	const server = new SMTPServer({
		// Loopback only and no credentials: this is a local recorder, never a relay.
		authOptional: true,
		disabledCommands: ['AUTH', 'STARTTLS'],
		size: MAX_MESSAGE_BYTES,
		logger: false,
		banner: 'Lotgate local mail recorder',
		onData(stream, session, callback) {
			const chunks: Buffer[] = [];
			stream.on('data', (c: Buffer) => chunks.push(c));
			stream.on('error', callback);
			stream.on('end', () => {
				if ((stream as unknown as { sizeExceeded?: boolean }).sizeExceeded) {
					callback(Object.assign(new Error('Message too large'), { responseCode: 552 }));
					return;
				}
				const envelope = {
					from: session.envelope.mailFrom ? session.envelope.mailFrom.address : null,
					to: session.envelope.rcptTo.map((r) => r.address)
				};
				storeMessage(pool, Buffer.concat(chunks), envelope).then(
					() => callback(),
					(error) => callback(Object.assign(new Error(`could not store the message: ${error.message}`), { responseCode: 451 }))
				);
			});
		}
	});
	await new Promise<void>((resolve, reject) => {
		server.once('error', reject);
		server.listen(options.port ?? 0, '127.0.0.1', () => resolve());
	});
	const port = (server.server.address() as AddressInfo).port;
	return {
		port,
		url: `smtp://127.0.0.1:${port}`,
		close: async () => {
			await new Promise<void>((resolve) => server.close(() => resolve()));
			await pool.end();
		}
	};
}
