// Tests tag their own audit events with unique action names to find their rows again; the product never does.
// This is the one place such a name passes the AuditAction type (src/lib/server/services/audit-actions.ts).
import type { AuditAction } from '../../src/lib/server/services/audit-actions';

export const testAction = (name: string) => name as AuditAction;
