import pg from 'pg';
import { Sequelize, Transaction } from 'sequelize';
import { defineModels, type Models } from './models';
import { config } from '../config';
import { registerTypeParsers } from './pg-types';

let instance: { sequelize: Sequelize; models: Models } | null = null;

/** The connection string; fails fast so a misconfigured server never starts half-working. */
export function databaseUrl(): string {
	const url = config().DATABASE_URL;
	if (!url) throw new Error('DATABASE_URL is not set: point it at PostgreSQL, or use `npm start`, which starts the embedded one.');
	return url;
}

function connect() {
	if (!instance) {
		registerTypeParsers();
		const sequelize = new Sequelize(databaseUrl(), {
			dialect: 'postgres',
			dialectModule: pg,
			logging: false,
			pool: { max: config().DB_POOL_MAX, idle: 10_000 },
			define: { underscored: true, timestamps: false }
		});
		instance = { sequelize, models: defineModels(sequelize) };
	}
	return instance;
}

export function sequelize(): Sequelize {
	return connect().sequelize;
}

export function models(): Models {
	return connect().models;
}

const beforeCommit = new WeakMap<Transaction, (() => Promise<void>)[]>();

/** One unit of work: every service mutation and its audit event commit or roll back together. */
export function transaction<T>(work: (tx: Transaction) => Promise<T>): Promise<T> {
	return sequelize().transaction(async (tx) => {
		beforeCommit.set(tx, []);
		const result = await work(tx);
		// Steps registered by the work run last, still inside the transaction (the audit chain appends here).
		for (const step of beforeCommit.get(tx)!) await step();
		return result;
	});
}

/** Registers a step to run at the end of a transaction opened by `transaction()`; false for any other transaction. */
export function runBeforeCommit(tx: Transaction, step: () => Promise<void>): boolean {
	const steps = beforeCommit.get(tx);
	if (!steps) return false;
	steps.push(step);
	return true;
}

export async function closeDatabase() {
	if (instance) {
		await instance.sequelize.close();
		instance = null;
	}
}

let lastHealthy = 0;
/** Cheap liveness probe, cached for a few seconds, used to answer 503 when the database is down. */
/** A connection error seen elsewhere: forget the cached "up" so the health check asks the database again. */
export function markDatabaseDown() {
	lastHealthy = 0;
}

export async function databaseIsUp(): Promise<boolean> {
	if (Date.now() - lastHealthy < 5000) return true;
	try {
		await sequelize().query('SELECT 1');
		lastHealthy = Date.now();
		return true;
	} catch {
		return false;
	}
}

export type { Transaction };
