import { DataTypes, Model, type Sequelize } from 'sequelize';
import type { Role } from '../../../permissions';

export type SupplierStatus = 'qualified' | 'on-watch' | 'blocked';
export type Technique = 'NIR' | 'Raman' | 'mid-IR';

export class User extends Model {
	declare id: number;
	declare email: string;
	declare name: string;
	declare passwordHash: string;
	declare roles: Role[];
	declare active: boolean;
	declare lockedUntil: Date | null;
	declare passwordChangedAt: Date;
	declare sessionVersion: number;
	declare passwordMustChange: boolean;
	declare createdAt: Date;
}

export class LoginFailure extends Model {
	declare id: number;
	declare email: string;
	declare at: Date;
	declare context: string;
}

export class Supplier extends Model {
	declare id: number;
	declare code: string;
	declare name: string;
	declare contacts: string[];
	declare status: SupplierStatus;
	declare createdAt: Date;
}

export class Material extends Model {
	declare id: number;
	declare code: string;
	declare name: string;
	declare technique: Technique;
	declare samplingPolicy: 'every-container' | 'reduced-allowed';
	declare samplingJustification: string | null;
	/** Replicate scans per container (1–5): a container is genuine only when all are genuine. */
	declare replicates: number;
	declare recipients: string[];
	/** The declared measurement axis (issue 12 §3); null until declared or taken from the first library upload. */
	declare axis: DeclaredAxis | null;
	declare createdAt: Date;
}

export interface DeclaredAxis {
	unit: 'nm' | 'cm-1' | 'um';
	from: number;
	to: number;
	/** Uniform spacing of the model grid; null keeps the first training spectrum's own points. */
	step: number | null;
	source: 'declared' | 'first-upload';
	setAt: string;
	reason: string | null;
}

export class MaterialClass extends Model {
	declare id: number;
	declare materialId: number;
	declare name: string;
	declare kind: 'genuine' | 'suspect';
	declare description: string;
}

export class Instrument extends Model {
	declare id: number;
	declare name: string;
	declare technique: Technique;
	declare serial: string;
	declare axisUnit: 'nm' | 'cm-1' | 'um';
	declare qualificationDue: string;
	/** First performance checks due by (the column defaults to 30 days after registration). */
	declare checksDueFrom?: string;
	declare active: boolean;
	declare createdAt: Date;
}

export class InstrumentToken extends Model {
	declare id: number;
	declare instrumentId: number;
	declare label: string;
	declare prefix: string;
	declare tokenHash: string;
	declare createdBy: number;
	declare createdAt: Date;
	declare revokedAt: Date | null;
}

export class Spectrum extends Model {
	declare id: number;
	declare sha256: string;
	declare raw: Buffer;
	declare fileName: string;
	declare format: string;
	declare rowIndex: number;
	declare points: number;
	declare axis: number[];
	declare intensities: number[];
	declare unit: 'nm' | 'cm-1' | 'um';
	declare yUnit: string | null;
	declare title: string | null;
	declare technique: string | null;
	declare acquiredAt: Date | null;
	declare meta: Record<string, string>;
	declare instrumentId: number | null;
	declare uploadedBy: number | null;
	declare context: 'loose' | 'library' | 'lot';
	declare contextId: number | null;
	declare createdAt: Date;
}

export class AuditEvent extends Model {
	declare id: number;
	declare at: Date;
	declare actorId: number | null;
	declare actorLabel: string;
	declare action: string;
	declare entity: string;
	declare entityId: string | null;
	declare before: unknown;
	declare after: unknown;
	declare reason: string | null;
	declare requestId: string | null;
	declare prevHash: string;
	declare hash: string;
}

const { INTEGER, BIGINT, TEXT, BOOLEAN, DATE, DATEONLY, JSONB, ARRAY, DOUBLE, BLOB } = DataTypes;
// Factories, not shared objects: Sequelize writes the column name into each attribute definition.
const id = () => ({ type: INTEGER, primaryKey: true, autoIncrement: true });
const createdAt = () => ({ type: DATE, allowNull: false, defaultValue: DataTypes.NOW });

export function defineModels(sequelize: Sequelize) {
	const common = { sequelize, underscored: true, timestamps: false };
	User.init(
		{
			id: id(),
			email: { type: TEXT, allowNull: false, unique: true },
			name: { type: TEXT, allowNull: false },
			passwordHash: { type: TEXT, allowNull: false },
			roles: { type: ARRAY(TEXT), allowNull: false, defaultValue: [] },
			active: { type: BOOLEAN, allowNull: false, defaultValue: true },
			lockedUntil: { type: DATE },
			passwordChangedAt: createdAt(),
			sessionVersion: { type: INTEGER, allowNull: false, defaultValue: 0 },
			passwordMustChange: { type: BOOLEAN, allowNull: false, defaultValue: false },
			createdAt: createdAt()
		},
		{ ...common, tableName: 'users', modelName: 'User' }
	);
	LoginFailure.init(
		{
			id: { type: BIGINT, primaryKey: true, autoIncrement: true },
			email: { type: TEXT, allowNull: false },
			at: createdAt(),
			context: { type: TEXT, allowNull: false, defaultValue: 'sign-in' }
		},
		{ ...common, tableName: 'login_failures', modelName: 'LoginFailure' }
	);
	Supplier.init(
		{
			id: id(),
			code: { type: TEXT, allowNull: false, unique: true },
			name: { type: TEXT, allowNull: false },
			contacts: { type: ARRAY(TEXT), allowNull: false, defaultValue: [] },
			status: { type: TEXT, allowNull: false, defaultValue: 'qualified' },
			createdAt: createdAt()
		},
		{ ...common, tableName: 'suppliers', modelName: 'Supplier' }
	);
	Material.init(
		{
			id: id(),
			code: { type: TEXT, allowNull: false, unique: true },
			name: { type: TEXT, allowNull: false },
			technique: { type: TEXT, allowNull: false },
			samplingPolicy: { type: TEXT, allowNull: false, defaultValue: 'every-container' },
			samplingJustification: { type: TEXT },
			replicates: { type: INTEGER, allowNull: false, defaultValue: 1 },
			recipients: { type: ARRAY(TEXT), allowNull: false, defaultValue: [] },
			axis: { type: JSONB },
			createdAt: createdAt()
		},
		{ ...common, tableName: 'materials', modelName: 'Material' }
	);
	MaterialClass.init(
		{
			id: id(),
			materialId: { type: INTEGER, allowNull: false },
			name: { type: TEXT, allowNull: false },
			kind: { type: TEXT, allowNull: false },
			description: { type: TEXT, allowNull: false, defaultValue: '' }
		},
		{ ...common, tableName: 'material_classes', modelName: 'MaterialClass' }
	);
	Instrument.init(
		{
			id: id(),
			name: { type: TEXT, allowNull: false, unique: true },
			technique: { type: TEXT, allowNull: false },
			serial: { type: TEXT, allowNull: false },
			axisUnit: { type: TEXT, allowNull: false },
			qualificationDue: { type: DATEONLY, allowNull: false },
			// NOT NULL with a default in the table; left out of an insert when not given.
			checksDueFrom: { type: DATEONLY },
			active: { type: BOOLEAN, allowNull: false, defaultValue: true },
			createdAt: createdAt()
		},
		{ ...common, tableName: 'instruments', modelName: 'Instrument' }
	);
	InstrumentToken.init(
		{
			id: id(),
			instrumentId: { type: INTEGER, allowNull: false },
			label: { type: TEXT, allowNull: false },
			prefix: { type: TEXT, allowNull: false },
			tokenHash: { type: TEXT, allowNull: false, unique: true },
			createdBy: { type: INTEGER, allowNull: false },
			createdAt: createdAt(),
			revokedAt: { type: DATE }
		},
		{ ...common, tableName: 'instrument_tokens', modelName: 'InstrumentToken' }
	);
	Spectrum.init(
		{
			id: { type: BIGINT, primaryKey: true, autoIncrement: true },
			sha256: { type: TEXT, allowNull: false },
			raw: { type: BLOB, allowNull: false },
			fileName: { type: TEXT, allowNull: false },
			format: { type: TEXT, allowNull: false },
			rowIndex: { type: INTEGER, allowNull: false, defaultValue: 0 },
			points: { type: INTEGER, allowNull: false },
			axis: { type: ARRAY(DOUBLE), allowNull: false },
			intensities: { type: ARRAY(DOUBLE), allowNull: false },
			unit: { type: TEXT, allowNull: false },
			yUnit: { type: TEXT },
			title: { type: TEXT },
			technique: { type: TEXT },
			acquiredAt: { type: DATE },
			meta: { type: JSONB, allowNull: false, defaultValue: {} },
			instrumentId: { type: INTEGER },
			uploadedBy: { type: INTEGER },
			context: { type: TEXT, allowNull: false, defaultValue: 'loose' },
			contextId: { type: INTEGER },
			createdAt: createdAt()
		},
		{ ...common, tableName: 'spectra', modelName: 'Spectrum' }
	);
	AuditEvent.init(
		{
			id: { type: BIGINT, primaryKey: true, autoIncrement: true },
			at: { type: DATE, allowNull: false },
			actorId: { type: INTEGER },
			actorLabel: { type: TEXT, allowNull: false },
			action: { type: TEXT, allowNull: false },
			entity: { type: TEXT, allowNull: false },
			entityId: { type: TEXT },
			before: { type: JSONB },
			after: { type: JSONB },
			reason: { type: TEXT },
			requestId: { type: TEXT },
			prevHash: { type: TEXT, allowNull: false },
			hash: { type: TEXT, allowNull: false }
		},
		{ ...common, tableName: 'audit_events', modelName: 'AuditEvent' }
	);
	return { User, LoginFailure, Supplier, Material, MaterialClass, Instrument, InstrumentToken, Spectrum, AuditEvent };
}

export type Models = ReturnType<typeof defineModels>;
