import { describe, it, expect } from 'vitest';
import type { Sequelize, Transaction } from 'sequelize';
import { compiledForTest, preparedQuery, preparedRead } from '../../src/lib/server/prepared';

describe('prepared statements from :name placeholders', () => {
	it('numbers placeholders by first appearance, reuses a number for a repeated name, and leaves casts alone', () => {
		const c = compiledForTest('SELECT :a, CAST(:b AS int), :a::text, x::jsonb, :c_2 FROM t WHERE y = :b');
		expect(c.text).toBe('SELECT $1, CAST($2 AS int), $1::text, x::jsonb, $3 FROM t WHERE y = $2');
		expect(c.params).toEqual(['a', 'b', 'c_2']);
		// the same text always gets the same statement name; another text another name
		expect(compiledForTest('SELECT :a, CAST(:b AS int), :a::text, x::jsonb, :c_2 FROM t WHERE y = :b').name).toBe(c.name);
		expect(compiledForTest('SELECT :a').name).not.toBe(c.name);
		expect(c.name).toMatch(/^regolog_[0-9a-f]{24}$/);
	});

	it('sends every value as a parameter, undefined as NULL, and refuses a missing one before sending anything', async () => {
		const sent: unknown[] = [];
		const t = { connection: { query: async (q: unknown) => (sent.push(q), { rows: [{ ok: 1 }] }) } } as unknown as Transaction;
		expect(await preparedQuery(t, 'SELECT :a AS x, :b AS y', { a: "it's; DROP TABLE items", b: undefined })).toEqual([{ ok: 1 }]);
		expect(sent).toEqual([{ name: expect.stringMatching(/^regolog_/), text: 'SELECT $1 AS x, $2 AS y', values: ["it's; DROP TABLE items", null] }]);
		await expect(preparedQuery(t, 'SELECT :a, :missing', { a: 1 })).rejects.toThrow('no value for :missing');
		expect(sent).toHaveLength(1);
	});

	it('reads on a connection of the pool and gives it back, also when the statement fails or a value is missing', async () => {
		const events: string[] = [];
		let fail = false;
		const connection = {
			query: async (q: { text: string; values: unknown[] }) => {
				events.push(`query ${q.text} ${JSON.stringify(q.values)}`);
				if (fail) throw new Error('relation "nope" does not exist');
				return { rows: [{ n: 1 }] };
			}
		};
		const sq = {
			connectionManager: {
				getConnection: async (o: { type: string }) => (events.push(`get ${o.type}`), connection),
				releaseConnection: async (c: unknown) => void events.push(c === connection ? 'release' : 'release another')
			}
		} as unknown as Sequelize;
		expect(await preparedRead(sq, 'SELECT :n AS n', { n: 1 })).toEqual([{ n: 1 }]);
		expect(events).toEqual(['get read', 'query SELECT $1 AS n [1]', 'release']);
		fail = true;
		await expect(preparedRead(sq, 'SELECT * FROM nope WHERE x = :x', { x: 2 })).rejects.toThrow('does not exist');
		await expect(preparedRead(sq, 'SELECT :missing', {})).rejects.toThrow('no value for :missing');
		expect(events.slice(3)).toEqual(['get read', 'query SELECT * FROM nope WHERE x = $1 [2]', 'release', 'get read', 'release']);
	});
});
