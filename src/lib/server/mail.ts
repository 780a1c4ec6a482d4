// Outgoing mail through an outbox: a workflow writes the message in its own transaction, and a pg-boss job sends it
// later with retries, so a mail failure can never block or undo the decision it reports.
import nodemailer, { type Transporter } from 'nodemailer';
import { QueryTypes, type Transaction } from 'sequelize';
import { sequelize } from './db';
import { config } from './config';

export type MailKind = 'certificate' | 'alert' | 'audit-checkpoint';
export type MailState = 'queued' | 'sent' | 'failed' | 'skipped';

/** Attempts before a message is marked failed (the job's retry limit is one less). */
export const MAIL_MAX_ATTEMPTS = 6;
// Longer than the transport's timeouts together, so a crashed worker's claim lapses but a live one's never does.
const CLAIM_SECONDS = 60;

export interface MailAttachmentRef {
	filename: string;
	contentType: string;
	certificateId: number;
}

export interface OutboxInput {
	kind: MailKind;
	recipients: string[];
	subject: string;
	body: string;
	attachments?: MailAttachmentRef[];
	lotId?: number | null;
	dispositionId?: number | null;
	alertId?: number | null;
}

export interface OutboxView {
	id: number;
	kind: MailKind;
	recipients: string[];
	subject: string;
	state: MailState;
	attempts: number;
	lastError: string | null;
	attachments: MailAttachmentRef[];
	createdAt: string;
	lastAttemptAt: string | null;
	sentAt: string | null;
	dispositionId: number | null;
	alertId: number | null;
}

type Dispatcher = (outboxId: number) => Promise<void>;
let dispatcher: Dispatcher | null = null;

/** The job module installs this; without it (scripts, tests) messages stay queued until someone delivers them. */
export function setDispatcher(fn: Dispatcher | null) {
	dispatcher = fn;
}

/** Writes a message into the outbox inside `tx`; it is handed to the sender only after the transaction commits. */
export async function queueMail(tx: Transaction, input: OutboxInput): Promise<number> {
	const recipients = [...new Set(input.recipients.map((r) => r.trim().toLowerCase()).filter(Boolean))];
	const [row] = await sequelize().query<{ id: number }>(
		`INSERT INTO mail_outbox (kind, recipients, subject, body, attachments, state, last_error, lot_id, disposition_id, alert_id)
		 VALUES (:kind, ARRAY(SELECT jsonb_array_elements_text(CAST(:recipients AS jsonb))), :subject, :body, :attachments, :state, :lastError, :lotId, :dispositionId, :alertId) RETURNING id`,
		{
			replacements: {
				kind: input.kind,
				recipients: JSON.stringify(recipients),
				subject: input.subject,
				body: input.body,
				attachments: JSON.stringify(input.attachments ?? []),
				state: recipients.length ? 'queued' : 'skipped',
				lastError: recipients.length ? null : 'no recipients are configured',
				lotId: input.lotId ?? null,
				dispositionId: input.dispositionId ?? null,
				alertId: input.alertId ?? null
			},
			type: QueryTypes.SELECT,
			transaction: tx
		}
	);
	const id = Number(row.id);
	if (!recipients.length) return id;
	tx.afterCommit(() => {
		if (!dispatcher) return;
		// The row is already safe in the outbox; a failed hand-off is picked up again by the sweeper.
		dispatcher(id).catch((error) => console.error(`[mail] could not hand message ${id} to the queue:`, error?.message ?? error));
	});
	return id;
}

let cached: { url: string; transporter: Transporter } | null = null;

function transporter(): Transporter {
	const url = config().SMTP_URL;
	if (!url) throw new Error('SMTP_URL is not set: no mail server to send through');
	if (cached?.url !== url) {
		cached = {
			url,
			transporter: nodemailer.createTransport(url, { connectionTimeout: 10_000, greetingTimeout: 5_000, socketTimeout: 20_000 } as never)
		};
	}
	return cached.transporter;
}

export const mailFrom = () => config().MAIL_FROM;

interface OutboxRow {
	id: number;
	kind: MailKind;
	recipients: string[];
	subject: string;
	body: string;
	attachments: MailAttachmentRef[];
	state: MailState;
	attempts: number;
	last_error: string | null;
	created_at: Date;
	last_attempt_at: Date | null;
	sent_at: Date | null;
	sending_until: Date | null;
	disposition_id: number | null;
	alert_id: number | null;
}

export type DeliveryOutcome = { state: MailState; attempts: number; error?: string };

/**
 * Sends one outbox message. Idempotent: a message already sent (or being sent by another worker) is left alone.
 * A failure is recorded on the row; it throws while retries remain so the job is retried, and marks the row
 * failed after MAIL_MAX_ATTEMPTS.
 */
export async function deliver(outboxId: number, { throwOnRetry = true } = {}): Promise<DeliveryOutcome> {
	const db = sequelize();
	const claimed = await db.transaction(async (tx) => {
		const rows = await db.query<OutboxRow>('SELECT * FROM mail_outbox WHERE id = :id FOR UPDATE SKIP LOCKED', {
			replacements: { id: outboxId },
			type: QueryTypes.SELECT,
			transaction: tx
		});
		const row = rows[0];
		if (!row || row.state !== 'queued') return null;
		// Another worker is talking to the mail server about it right now: never send twice.
		if (row.sending_until && new Date(row.sending_until) > new Date()) return null;
		await db.query('UPDATE mail_outbox SET attempts = attempts + 1, last_attempt_at = now(), sending_until = now() + make_interval(secs => :hold) WHERE id = :id', {
			replacements: { id: outboxId, hold: CLAIM_SECONDS },
			transaction: tx
		});
		return { ...row, attempts: row.attempts + 1 };
	});
	if (!claimed) {
		const [row] = await db.query<{ state: MailState; attempts: number }>('SELECT state, attempts FROM mail_outbox WHERE id = :id', { replacements: { id: outboxId }, type: QueryTypes.SELECT });
		return { state: row?.state ?? 'failed', attempts: row?.attempts ?? 0 };
	}
	try {
		const attachments = [];
		for (const a of claimed.attachments ?? []) {
			const [cert] = await db.query<{ pdf: Buffer }>('SELECT pdf FROM certificates WHERE id = :id', { replacements: { id: a.certificateId }, type: QueryTypes.SELECT });
			if (!cert) throw new Error(`attachment ${a.filename}: certificate ${a.certificateId} is missing`);
			attachments.push({ filename: a.filename, contentType: a.contentType, content: cert.pdf });
		}
		const info = await transporter().sendMail({
			from: mailFrom(),
			to: claimed.recipients.join(', '),
			subject: claimed.subject,
			text: claimed.body,
			attachments,
			headers: { 'X-Lotgate-Outbox': String(claimed.id) }
		});
		await db.query("UPDATE mail_outbox SET state = 'sent', sent_at = now(), sending_until = NULL, last_error = NULL, message_id = :messageId WHERE id = :id", {
			replacements: { id: outboxId, messageId: info.messageId ?? null }
		});
		return { state: 'sent', attempts: claimed.attempts };
	} catch (error) {
		const message = String((error as Error)?.message ?? error).slice(0, 500);
		const final = claimed.attempts >= MAIL_MAX_ATTEMPTS;
		await db.query('UPDATE mail_outbox SET state = :state, last_error = :message, sending_until = NULL WHERE id = :id', {
			replacements: { id: outboxId, state: final ? 'failed' : 'queued', message }
		});
		if (!final && throwOnRetry) throw new Error(`mail ${outboxId} attempt ${claimed.attempts} failed: ${message}`);
		return { state: final ? 'failed' : 'queued', attempts: claimed.attempts, error: message };
	}
}

/** Queued messages that never reached the job queue (e.g. the server stopped right after the commit). */
export async function stranded(olderThanSeconds = 60, limit = 50): Promise<number[]> {
	const rows = await sequelize().query<{ id: number }>(
		`SELECT id FROM mail_outbox WHERE state = 'queued' AND last_attempt_at IS NULL AND created_at < now() - make_interval(secs => :age)
		  ORDER BY id LIMIT :limit`,
		{ replacements: { age: olderThanSeconds, limit }, type: QueryTypes.SELECT }
	);
	return rows.map((r) => Number(r.id));
}

const toView = (r: OutboxRow): OutboxView => ({
	id: Number(r.id),
	kind: r.kind,
	recipients: r.recipients,
	subject: r.subject,
	state: r.state,
	attempts: r.attempts,
	lastError: r.last_error,
	attachments: r.attachments ?? [],
	createdAt: new Date(r.created_at).toISOString(),
	lastAttemptAt: r.last_attempt_at ? new Date(r.last_attempt_at).toISOString() : null,
	sentAt: r.sent_at ? new Date(r.sent_at).toISOString() : null,
	dispositionId: r.disposition_id == null ? null : Number(r.disposition_id),
	alertId: r.alert_id == null ? null : Number(r.alert_id)
});

/** Delivery state of a lot's messages, newest first (the lot page shows it). */
export async function forLot(lotId: number): Promise<OutboxView[]> {
	const rows = await sequelize().query<OutboxRow>('SELECT * FROM mail_outbox WHERE lot_id = :lotId ORDER BY id DESC', { replacements: { lotId }, type: QueryTypes.SELECT });
	return rows.map(toView);
}

export async function get(outboxId: number): Promise<OutboxView | null> {
	const rows = await sequelize().query<OutboxRow>('SELECT * FROM mail_outbox WHERE id = :id', { replacements: { id: outboxId }, type: QueryTypes.SELECT });
	return rows[0] ? toView(rows[0]) : null;
}
