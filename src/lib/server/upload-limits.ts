// The one source of upload limits: per file, per request and per batch, read from the typed config on every call (so
// tests and operators can change them), with the words a refusal uses. The hook, the multipart reader, the intake
// service and the upload routes all ask here.
import { config } from './config';

export const MB = 1024 * 1024;
/** Room for a single-file request's form fields and multipart boundaries around the file itself. */
const ENVELOPE_BYTES = 64 * 1024;

/** Largest accepted file (LOTGATE_MAX_UPLOAD_MB, default 20 MB). */
export const maxFileBytes = () => Math.round(config().LOTGATE_MAX_UPLOAD_MB * MB);
/** Most files in one request (LOTGATE_MAX_BATCH_FILES, default 200). */
export const maxBatchFiles = () => Math.floor(config().LOTGATE_MAX_BATCH_FILES);
/** Largest whole batch request (LOTGATE_MAX_BATCH_MB, default 200 MB): a batch is read into memory once before parsing. */
export const maxBatchBytes = () => Math.round(config().LOTGATE_MAX_BATCH_MB * MB);
/** Largest single-file request (one scan): the file limit plus its form fields. */
export const maxSingleUploadBytes = () => maxFileBytes() + ENVELOPE_BYTES;

/** A file over the limit, by its known size. */
export const fileTooLargeMessage = (name: string, size: number) => `${name}: the file is ${(size / MB).toFixed(1)} MB; the limit is ${maxFileBytes() / MB} MB`;
/** A file that crossed the limit while streaming (its full size is never read). */
export const streamedTooLargeMessage = (name: string, limit: number) => `${name}: the file is larger than the limit of ${+(limit / MB).toFixed(2)} MB`;
/** A single-file request whose declared length is over the limit. */
export const uploadTooLargeMessage = () => `The upload is larger than ${maxFileBytes() / MB} MB`;
/** A batch request whose declared length is over the limit. */
export const batchTooLargeMessage = (length: number) => `The upload is ${(length / MB).toFixed(1)} MB; one request may carry at most ${maxBatchBytes() / MB} MB`;
