import type { Sequelize } from 'sequelize';
import foundation from './001-foundation';
import methodDevelopment from './002-method-development';
import lots from './003-lots';
import modelRebuilds from './004-model-rebuilds';
import lotsExtra from './005-lots-extra';
import disposition from './006-disposition';
import auditAnchor from './010-audit-anchor';
import sessionsAndDuties from './020-sessions-and-duties';
import resultIntegrity from './030-result-integrity';
import qualityGates from './031-quality-gates';
import acceptanceCriteria from './040-acceptance-criteria';
import auditorRole from './060-auditor-role';
import supplierDrift from './080-supplier-drift';
import instrumentChecks from './081-instrument-checks';
import modelTransfer from './150-model-transfer';
import declaredAxis from './120-declared-axis';
import libraryGrowth from './151-library-growth';
import modelReviews from './160-model-reviews';

export interface Migration {
	name: string;
	up(sequelize: Sequelize): Promise<void>;
	down(sequelize: Sequelize): Promise<void>;
}

// Append new migrations at the end; never edit one that has shipped.
export const migrations: Migration[] = [foundation, methodDevelopment, lots, modelRebuilds, lotsExtra, disposition, auditAnchor, sessionsAndDuties, resultIntegrity, qualityGates, acceptanceCriteria, auditorRole, supplierDrift, instrumentChecks, modelTransfer, declaredAxis, libraryGrowth, modelReviews];
