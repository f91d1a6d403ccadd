import { stringify } from 'csv-stringify/sync';
import type { Sequelize } from 'sequelize';
import { formatMg } from '../../domain/mass';
import type { Who } from './common';
import { allItems, type ListQuery } from './items';

export const EXPORT_COLUMNS = [
	'code', 'kind', 'collection', 'parent_code', 'depth', 'description', 'mass_mg', 'mass_ug', 'initial_mass_ug', 'u_ug',
	'state', 'holder', 'container', 'storage_place', 'registered_at'
] as const;

/** The rows of an items view as CSV (RFC 4180), in the view's own order, with exact µg beside mg. */
export async function exportItemsCsv(sq: Sequelize, who: Who, q: ListQuery): Promise<string> {
	const rows: (string | number)[][] = [];
	for await (const i of allItems(sq, who, q)) {
		rows.push([
			i.code, i.kind, i.collection, i.parentCode ?? '', i.depth, i.description, formatMg(i.massUg).replace(' mg', ''), i.massUg, i.initialMassUg,
			i.uUg === null ? '' : i.uUg.toFixed(3), i.state, i.holder.name, i.container, i.storagePlace, i.createdAt
		]);
	}
	return stringify(rows, { header: true, columns: [...EXPORT_COLUMNS] });
}
