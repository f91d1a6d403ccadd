import { DataTypes, Model, type Sequelize, type InferAttributes, type InferCreationAttributes, type CreationOptional } from 'sequelize';
import { db } from '../db';
import type { Role } from '../auth/types';
import { initRegistry } from './registry';

export * from './registry';

export class Lab extends Model<InferAttributes<Lab>, InferCreationAttributes<Lab>> {
	declare id: CreationOptional<string>;
	declare name: string;
	declare shortName: string;
	declare institution: CreationOptional<string>;
	declare contactEmail: CreationOptional<string>;
	declare active: CreationOptional<boolean>;
	declare createdAt: CreationOptional<Date>;
	declare updatedAt: CreationOptional<Date>;
}

export class User extends Model<InferAttributes<User>, InferCreationAttributes<User>> {
	declare id: CreationOptional<string>;
	declare email: string;
	declare name: string;
	declare role: Role;
	declare labId: string | null;
	declare passwordHash: string | null;
	declare active: CreationOptional<boolean>;
	declare deactivatedAt: Date | null;
	declare createdAt: CreationOptional<Date>;
	declare updatedAt: CreationOptional<Date>;
	declare lab?: Lab | null;
}

export class Session extends Model<InferAttributes<Session>, InferCreationAttributes<Session>> {
	declare id: string;
	declare userId: string;
	declare expiresAt: Date;
	declare ip: CreationOptional<string>;
	declare userAgent: CreationOptional<string>;
	declare createdAt: CreationOptional<Date>;
}

export class ApiToken extends Model<InferAttributes<ApiToken>, InferCreationAttributes<ApiToken>> {
	declare id: CreationOptional<string>;
	declare userId: string;
	declare label: string;
	declare tokenHash: string;
	declare prefix: string;
	declare lastUsedAt: Date | null;
	declare expiresAt: Date | null;
	declare revokedAt: Date | null;
	declare createdAt: CreationOptional<Date>;
}

export class EmailToken extends Model<InferAttributes<EmailToken>, InferCreationAttributes<EmailToken>> {
	declare id: CreationOptional<string>;
	declare userId: string;
	declare purpose: 'invite' | 'reset';
	declare tokenHash: string;
	declare expiresAt: Date;
	declare usedAt: Date | null;
	declare createdBy: string | null;
	declare createdAt: CreationOptional<Date>;
}

export class MailOutbox extends Model<InferAttributes<MailOutbox>, InferCreationAttributes<MailOutbox>> {
	declare id: CreationOptional<number>;
	declare toAddress: string;
	declare subject: string;
	declare bodyText: string;
	declare bodyHtml: string | null;
	declare kind: string;
	declare status: CreationOptional<'queued' | 'sent' | 'failed'>;
	declare attempts: CreationOptional<number>;
	declare nextAttemptAt: CreationOptional<Date>;
	declare lastError: string | null;
	declare sentAt: Date | null;
	declare createdAt: CreationOptional<Date>;
}

const uuidPk = { type: DataTypes.UUID, primaryKey: true, defaultValue: DataTypes.UUIDV4 };

function init(sequelize: Sequelize) {
	Lab.init(
		{
			id: uuidPk,
			name: { type: DataTypes.TEXT, allowNull: false },
			shortName: { type: DataTypes.TEXT, allowNull: false },
			institution: { type: DataTypes.TEXT, allowNull: false, defaultValue: '' },
			contactEmail: { type: DataTypes.TEXT, allowNull: false, defaultValue: '' },
			active: { type: DataTypes.BOOLEAN, allowNull: false, defaultValue: true },
			createdAt: DataTypes.DATE,
			updatedAt: DataTypes.DATE
		},
		{ sequelize, tableName: 'labs', underscored: true }
	);
	User.init(
		{
			id: uuidPk,
			email: { type: DataTypes.TEXT, allowNull: false },
			name: { type: DataTypes.TEXT, allowNull: false },
			role: { type: DataTypes.TEXT, allowNull: false },
			labId: { type: DataTypes.UUID, allowNull: true },
			passwordHash: { type: DataTypes.TEXT, allowNull: true },
			active: { type: DataTypes.BOOLEAN, allowNull: false, defaultValue: true },
			deactivatedAt: { type: DataTypes.DATE, allowNull: true },
			createdAt: DataTypes.DATE,
			updatedAt: DataTypes.DATE
		},
		{ sequelize, tableName: 'users', underscored: true }
	);
	Session.init(
		{
			id: { type: DataTypes.TEXT, primaryKey: true },
			userId: { type: DataTypes.UUID, allowNull: false },
			expiresAt: { type: DataTypes.DATE, allowNull: false },
			ip: { type: DataTypes.TEXT, allowNull: false, defaultValue: '' },
			userAgent: { type: DataTypes.TEXT, allowNull: false, defaultValue: '' },
			createdAt: DataTypes.DATE
		},
		{ sequelize, tableName: 'sessions', underscored: true, updatedAt: false }
	);
	ApiToken.init(
		{
			id: uuidPk,
			userId: { type: DataTypes.UUID, allowNull: false },
			label: { type: DataTypes.TEXT, allowNull: false },
			tokenHash: { type: DataTypes.TEXT, allowNull: false },
			prefix: { type: DataTypes.TEXT, allowNull: false },
			lastUsedAt: { type: DataTypes.DATE, allowNull: true },
			expiresAt: { type: DataTypes.DATE, allowNull: true },
			revokedAt: { type: DataTypes.DATE, allowNull: true },
			createdAt: DataTypes.DATE
		},
		{ sequelize, tableName: 'api_tokens', underscored: true, updatedAt: false }
	);
	EmailToken.init(
		{
			id: uuidPk,
			userId: { type: DataTypes.UUID, allowNull: false },
			purpose: { type: DataTypes.TEXT, allowNull: false },
			tokenHash: { type: DataTypes.TEXT, allowNull: false },
			expiresAt: { type: DataTypes.DATE, allowNull: false },
			usedAt: { type: DataTypes.DATE, allowNull: true },
			createdBy: { type: DataTypes.UUID, allowNull: true },
			createdAt: DataTypes.DATE
		},
		{ sequelize, tableName: 'email_tokens', underscored: true, updatedAt: false }
	);
	MailOutbox.init(
		{
			id: { type: DataTypes.BIGINT, primaryKey: true, autoIncrement: true },
			toAddress: { type: DataTypes.TEXT, allowNull: false },
			subject: { type: DataTypes.TEXT, allowNull: false },
			bodyText: { type: DataTypes.TEXT, allowNull: false },
			bodyHtml: { type: DataTypes.TEXT, allowNull: true },
			kind: { type: DataTypes.TEXT, allowNull: false },
			status: { type: DataTypes.TEXT, allowNull: false, defaultValue: 'queued' },
			attempts: { type: DataTypes.INTEGER, allowNull: false, defaultValue: 0 },
			nextAttemptAt: { type: DataTypes.DATE, allowNull: false, defaultValue: DataTypes.NOW },
			lastError: { type: DataTypes.TEXT, allowNull: true },
			sentAt: { type: DataTypes.DATE, allowNull: true },
			createdAt: DataTypes.DATE
		},
		{ sequelize, tableName: 'mail_outbox', underscored: true, updatedAt: false }
	);
	User.belongsTo(Lab, { as: 'lab', foreignKey: 'labId' });
	Lab.hasMany(User, { as: 'members', foreignKey: 'labId' });
}

let ready = false;
/** Initialises every model on the one connection (idempotent); returns the connection. */
export function models(): Sequelize {
	const sequelize = db();
	if (!ready) {
		init(sequelize);
		initRegistry(sequelize);
		ready = true;
	}
	return sequelize;
}
