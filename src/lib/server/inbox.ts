// The demo/test inbox: what the local SMTP stand-in received (mail_messages), with attachments read back from the raw message.
import { error } from '@sveltejs/kit';
import { simpleParser } from 'mailparser';
import { QueryTypes } from 'sequelize';
import { sequelize } from './db';
import { config } from './config';

export const inboxEnabled = () => config().LOTGATE_DEMO || config().LOTGATE_TEST;

/** The inbox exists only in demo and test mode; elsewhere it answers 404 as if it were not there. */
export function requireInbox() {
	if (!inboxEnabled()) error(404, 'The demo inbox exists only in demo and test mode.');
}

export interface InboxMessage {
	id: number;
	receivedAt: string;
	envelopeFrom: string | null;
	envelopeTo: string[];
	subject: string | null;
	from: string | null;
	to: string | null;
	text: string | null;
	attachments: { index: number; filename: string; contentType: string; size: number; sha256: string }[];
	size: number;
}

export async function list(options: { page?: number; pageSize?: number; q?: string } = {}) {
	const pageSize = Math.min(Math.max(options.pageSize ?? 25, 1), 100);
	const page = Math.max(options.page ?? 1, 1);
	const rows = await sequelize().query<Record<string, unknown>>(
		`SELECT id, received_at, envelope_from, envelope_to, subject, from_header, to_header, text_body, attachments, octet_length(raw) AS size, count(*) OVER () AS total
		   FROM mail_messages ${options.q ? 'WHERE subject ILIKE :q OR to_header ILIKE :q' : ''} ORDER BY id DESC LIMIT :limit OFFSET :offset`,
		{ replacements: { q: `%${options.q ?? ''}%`, limit: pageSize, offset: (page - 1) * pageSize }, type: QueryTypes.SELECT }
	);
	const messages: InboxMessage[] = rows.map((r) => ({
		id: Number(r.id),
		receivedAt: new Date(r.received_at as Date).toISOString(),
		envelopeFrom: (r.envelope_from as string | null) ?? null,
		envelopeTo: (r.envelope_to as string[]) ?? [],
		subject: (r.subject as string | null) ?? null,
		from: (r.from_header as string | null) ?? null,
		to: (r.to_header as string | null) ?? null,
		text: (r.text_body as string | null) ?? null,
		attachments: (r.attachments as InboxMessage['attachments']) ?? [],
		size: Number(r.size)
	}));
	return { messages, total: rows.length ? Number(rows[0].total) : 0, page, pageSize };
}

export async function attachment(messageId: number, index: number) {
	const rows = await sequelize().query<{ raw: Buffer }>('SELECT raw FROM mail_messages WHERE id = :id', { replacements: { id: messageId }, type: QueryTypes.SELECT });
	if (!rows[0]) error(404, `Message ${messageId} was not received`);
	const parsed = await simpleParser(rows[0].raw);
	const a = parsed.attachments[index];
	if (!a) error(404, `Message ${messageId} has no attachment ${index + 1}`);
	return { filename: a.filename ?? `attachment-${index + 1}`, contentType: a.contentType, content: a.content };
}
