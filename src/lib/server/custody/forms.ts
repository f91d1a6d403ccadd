import { QueryTypes } from 'sequelize';
import { fail } from '@sveltejs/kit';
import { parseMgToUg } from '../../domain/mass';
import { models } from '../models';

export async function collectionChoices() {
	return models().query<{ prefix: string; name: string }>('SELECT prefix, name FROM collections ORDER BY prefix', { type: QueryTypes.SELECT });
}

/** Reads a mass typed in mg into exact µg, or a form failure naming the field. */
export function mgField(values: Record<string, string>, field: string, label: string, opts: { optional?: boolean } = {}): number | undefined | { failure: ReturnType<typeof fail> } {
	const raw = (values[field] ?? '').trim();
	if (!raw && opts.optional) return undefined;
	try {
		return parseMgToUg(raw, label);
	} catch (e) {
		return { failure: fail(400, { values, fields: { [field]: (e as Error).message }, message: `${label}: ${(e as Error).message}` }) };
	}
}

export function isFailure(v: unknown): v is { failure: ReturnType<typeof fail> } {
	return typeof v === 'object' && v !== null && 'failure' in v;
}
