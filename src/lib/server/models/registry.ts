import { DataTypes, Model, type Sequelize, type InferAttributes, type InferCreationAttributes, type CreationOptional } from 'sequelize';

/** Masses are integer µg (bigint columns, parsed to safe JS numbers by db.ts). */

export type CollectionKind = 'sample_return' | 'meteorite' | 'laboratory_analogue';
export type ItemKind = 'specimen' | 'aliquot' | 'blank';
export const ITEM_STATES = ['stored', 'earmarked', 'in_transit', 'on_loan', 'consumed', 'lost'] as const;
export type ItemState = (typeof ITEM_STATES)[number];

export class Collection extends Model<InferAttributes<Collection>, InferCreationAttributes<Collection>> {
	declare id: CreationOptional<string>;
	declare prefix: string;
	declare name: string;
	declare kind: CollectionKind;
	declare description: CreationOptional<string>;
	declare allowedAtmospheres: CreationOptional<string[]>;
	declare allowedContactMaterials: CreationOptional<string[]>;
	declare maxAirExposureMin: number | null;
	declare reserveFraction: string;
	declare lossToleranceUg: number | null;
	declare lossToleranceFraction: string | null;
	declare nextSerial: CreationOptional<number>;
	declare createdAt: CreationOptional<Date>;
	declare updatedAt: CreationOptional<Date>;
}

export class Balance extends Model<InferAttributes<Balance>, InferCreationAttributes<Balance>> {
	declare id: CreationOptional<string>;
	declare name: string;
	declare model: CreationOptional<string>;
	declare location: CreationOptional<string>;
	declare readabilityUg: string;
	declare repeatabilityUg: string;
	declare calibrationDue: string;
	declare active: CreationOptional<boolean>;
	declare createdAt: CreationOptional<Date>;
	declare updatedAt: CreationOptional<Date>;
}

export class Item extends Model<InferAttributes<Item>, InferCreationAttributes<Item>> {
	declare id: CreationOptional<string>;
	declare collectionId: string;
	declare serial: number;
	declare code: string;
	declare parentId: string | null;
	declare depth: number;
	declare kind: ItemKind;
	declare description: CreationOptional<string>;
	declare initialMassUg: number;
	declare massUg: number;
	declare massUUg: number | null;
	declare state: CreationOptional<ItemState>;
	declare holderLabId: string | null;
	declare container: CreationOptional<string>;
	declare storagePlace: CreationOptional<string>;
	declare provenance: CreationOptional<string>;
	declare splitId: string | null;
	declare createdBy: string | null;
	declare createdAt: CreationOptional<Date>;
	declare updatedAt: CreationOptional<Date>;
}

export class Split extends Model<InferAttributes<Split>, InferCreationAttributes<Split>> {
	declare id: CreationOptional<string>;
	declare parentId: string;
	declare balanceId: string | null;
	declare parentBeforeUg: number;
	declare parentAfterUg: number;
	declare childrenTotalUg: number;
	declare lossUg: number;
	declare lossUUg: number;
	declare reweighed: boolean;
	declare verdict: 'ok' | 'needs-reason';
	declare reason: string | null;
	declare operatorId: string | null;
	declare at: CreationOptional<Date>;
}

export class Weighing extends Model<InferAttributes<Weighing>, InferCreationAttributes<Weighing>> {
	declare id: CreationOptional<string>;
	declare itemId: string;
	declare balanceId: string;
	declare purpose: 'registration' | 'split_child' | 'split_parent_after' | 'check';
	declare grossUg: number;
	declare tareUg: number;
	declare netUg: number;
	declare uUg: number;
	declare expandedUg: number;
	declare minimumWeightUg: number;
	declare belowMinimum: boolean;
	declare reason: string | null;
	declare splitId: string | null;
	declare operatorId: string | null;
	declare at: CreationOptional<Date>;
}

export class LedgerEntry extends Model<InferAttributes<LedgerEntry>, InferCreationAttributes<LedgerEntry>> {
	declare id: CreationOptional<number>;
	declare itemId: string;
	declare seq: number;
	declare kind: 'registered' | 'split_in' | 'split_out' | 'split_loss' | 'reweighed';
	declare deltaUg: number;
	declare balanceAfterUg: number;
	declare uAfterUg: number | null;
	declare splitId: string | null;
	declare weighingId: string | null;
	declare counterpartId: string | null;
	declare note: CreationOptional<string>;
	declare actorId: string | null;
	declare at: CreationOptional<Date>;
}

const uuidPk = { type: DataTypes.UUID, primaryKey: true, defaultValue: DataTypes.UUIDV4 };
const uuid = (allowNull: boolean) => ({ type: DataTypes.UUID, allowNull });
const text = (defaultValue?: string) => ({ type: DataTypes.TEXT, allowNull: false, ...(defaultValue === undefined ? {} : { defaultValue }) });
const bigint = (allowNull = false) => ({ type: DataTypes.BIGINT, allowNull });
const double = (allowNull = false) => ({ type: DataTypes.DOUBLE, allowNull });
const appendOnly = { underscored: true, timestamps: false } as const;

export function initRegistry(sequelize: Sequelize) {
	Collection.init(
		{
			id: uuidPk,
			prefix: text(),
			name: text(),
			kind: text(),
			description: text(''),
			allowedAtmospheres: { type: DataTypes.ARRAY(DataTypes.TEXT), allowNull: false, defaultValue: [] },
			allowedContactMaterials: { type: DataTypes.ARRAY(DataTypes.TEXT), allowNull: false, defaultValue: [] },
			maxAirExposureMin: { type: DataTypes.INTEGER, allowNull: true },
			reserveFraction: { type: DataTypes.DECIMAL(6, 5), allowNull: false },
			lossToleranceUg: bigint(true),
			lossToleranceFraction: { type: DataTypes.DECIMAL(7, 6), allowNull: true },
			nextSerial: { type: DataTypes.BIGINT, allowNull: false, defaultValue: 1 },
			createdAt: DataTypes.DATE,
			updatedAt: DataTypes.DATE
		},
		{ sequelize, tableName: 'collections', underscored: true }
	);
	Balance.init(
		{
			id: uuidPk,
			name: text(),
			model: text(''),
			location: text(''),
			readabilityUg: { type: DataTypes.DECIMAL(12, 4), allowNull: false },
			repeatabilityUg: { type: DataTypes.DECIMAL(12, 4), allowNull: false },
			calibrationDue: { type: DataTypes.DATEONLY, allowNull: false },
			active: { type: DataTypes.BOOLEAN, allowNull: false, defaultValue: true },
			createdAt: DataTypes.DATE,
			updatedAt: DataTypes.DATE
		},
		{ sequelize, tableName: 'balances', underscored: true }
	);
	Item.init(
		{
			id: uuidPk,
			collectionId: uuid(false),
			serial: bigint(),
			code: text(),
			parentId: uuid(true),
			depth: { type: DataTypes.INTEGER, allowNull: false },
			kind: text(),
			description: text(''),
			initialMassUg: bigint(),
			massUg: bigint(),
			massUUg: double(true),
			state: text('stored'),
			holderLabId: uuid(true),
			container: text(''),
			storagePlace: text(''),
			provenance: text(''),
			splitId: uuid(true),
			createdBy: uuid(true),
			createdAt: DataTypes.DATE,
			updatedAt: DataTypes.DATE
		},
		{ sequelize, tableName: 'items', underscored: true }
	);
	Split.init(
		{
			id: uuidPk,
			parentId: uuid(false),
			balanceId: uuid(true),
			parentBeforeUg: bigint(),
			parentAfterUg: bigint(),
			childrenTotalUg: bigint(),
			lossUg: bigint(),
			lossUUg: double(),
			reweighed: { type: DataTypes.BOOLEAN, allowNull: false },
			verdict: text(),
			reason: { type: DataTypes.TEXT, allowNull: true },
			operatorId: uuid(true),
			at: { type: DataTypes.DATE, allowNull: false, defaultValue: DataTypes.NOW }
		},
		{ sequelize, tableName: 'splits', ...appendOnly }
	);
	Weighing.init(
		{
			id: uuidPk,
			itemId: uuid(false),
			balanceId: uuid(false),
			purpose: text(),
			grossUg: bigint(),
			tareUg: bigint(),
			netUg: bigint(),
			uUg: double(),
			expandedUg: double(),
			minimumWeightUg: bigint(),
			belowMinimum: { type: DataTypes.BOOLEAN, allowNull: false },
			reason: { type: DataTypes.TEXT, allowNull: true },
			splitId: uuid(true),
			operatorId: uuid(true),
			at: { type: DataTypes.DATE, allowNull: false, defaultValue: DataTypes.NOW }
		},
		{ sequelize, tableName: 'weighings', ...appendOnly }
	);
	LedgerEntry.init(
		{
			id: { type: DataTypes.BIGINT, primaryKey: true, autoIncrement: true },
			itemId: uuid(false),
			seq: { type: DataTypes.INTEGER, allowNull: false },
			kind: text(),
			deltaUg: bigint(),
			balanceAfterUg: bigint(),
			uAfterUg: double(true),
			splitId: uuid(true),
			weighingId: uuid(true),
			counterpartId: uuid(true),
			note: text(''),
			actorId: uuid(true),
			at: { type: DataTypes.DATE, allowNull: false, defaultValue: DataTypes.NOW }
		},
		{ sequelize, tableName: 'ledger_entries', ...appendOnly }
	);
	Item.belongsTo(Collection, { as: 'collection', foreignKey: 'collectionId' });
	Item.belongsTo(Item, { as: 'parent', foreignKey: 'parentId' });
	Item.hasMany(Item, { as: 'children', foreignKey: 'parentId' });
	Item.hasMany(LedgerEntry, { as: 'ledger', foreignKey: 'itemId' });
	Split.belongsTo(Item, { as: 'parentItem', foreignKey: 'parentId' });
	Weighing.belongsTo(Balance, { as: 'balance', foreignKey: 'balanceId' });
}
