import { expect } from 'vitest';
import type { Client } from './http';

export const PLAN = 'Chiral GC-MS of derivatised amino acids with two procedural blanks.';
export const WHY = 'Needed to test whether the isovaline excess seen in cell 1 is indigenous.';

export async function newRequest(lab: Client, collection: string, massUg: number) {
	const r = await lab.post('/api/requests', { collection, massUg, analysisPlan: PLAN, justification: WHY, destructive: true, techniques: ['chiral GC-MS'], submit: true });
	expect(r.status, JSON.stringify(r.body)).toBe(201);
	return r.body.request.id as string;
}

/** A granted request with a fresh aliquot of its size set aside, ready to ship. */
export async function grantedAndSetAside(lab: Client, curator: Client, collection: string, massUg: number) {
	const id = await newRequest(lab, collection, massUg);
	expect((await curator.post(`/api/requests/${id}/grant`, { grantedUg: massUg })).status).toBe(200);
	const items = (await curator.get(`/api/items?collection=${collection}&state=stored&holder=facility&kind=specimen`)).body.items as { code: string; massUg: number }[];
	const parent = items.sort((a, b) => b.massUg - a.massUg)[0];
	const split = await curator.post(`/api/items/${encodeURIComponent(parent.code)}/splits`, { children: [{ massUg }] });
	expect(split.status, JSON.stringify(split.body)).toBe(201);
	const code = split.body.children[0].code as string;
	const ear = await curator.post(`/api/requests/${id}/earmark`, { itemCode: code });
	expect(ear.status, JSON.stringify(ear.body)).toBe(200);
	return { id, code };
}
