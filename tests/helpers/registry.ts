// Helpers for registry tests: fresh specimens through the API, so tests never spend demo material.
import type { Client } from './http';

export async function newSpecimen(c: Client, massUg: number, extra: Record<string, unknown> = {}): Promise<string> {
	const r = await c.post('/api/items', { collection: 'HLF', massUg, description: `test specimen of ${massUg} µg`, ...extra });
	if (r.status !== 201) throw new Error(`registering a specimen failed: ${r.status} ${JSON.stringify(r.body)}`);
	return r.body.item.code;
}

export async function balanceByReadability(c: Client, d: number): Promise<{ id: string; minimumWeightUg: number; netUUg: number; readabilityUg: number; repeatabilityUg: number }> {
	const r = await c.get('/api/balances');
	const b = r.body.balances.find((x: { readabilityUg: number; usable: boolean }) => x.readabilityUg === d && x.usable);
	if (!b) throw new Error(`no usable balance with d = ${d} µg`);
	return b;
}

/** A code of the right shape whose check character is wrong. */
export function mistype(code: string): string {
	const last = code.at(-1)!;
	return code.slice(0, -1) + (last === 'A' ? 'B' : 'A');
}
