import { QueryTypes, type Sequelize } from 'sequelize';
import { appendTrail, SYSTEM_ACTOR } from './trail';
import { SYSTEM_WHO, type Who } from './registry/common';
import { registerSpecimen } from './registry/items';
import { splitItem } from './registry/split';

/** The Brightwater collections (DESIGN §5; all invented). */
export const DEMO_COLLECTIONS = [
	{
		prefix: 'TRN', name: 'Lantern return from Tarnwick', kind: 'sample_return',
		description: 'Regolith returned by the sample-return mission Lantern from the small asteroid Tarnwick, in two sealed return cells.',
		atmospheres: ['nitrogen glovebox'], materials: ['stainless steel 316L', 'PTFE', 'fused silica', 'aluminium 6061'], maxAir: 0,
		reserve: 0.85, tolUg: null, tolFraction: 0.002
	},
	{
		prefix: 'HLF', name: 'Hollins Ford fall', kind: 'meteorite',
		description: 'Carbonaceous meteorite fall: a main mass and fragments collected within days of the fall.',
		atmospheres: ['nitrogen glovebox', 'ISO 5 cleanroom air'], materials: ['stainless steel 316L', 'PTFE', 'nitrile', 'diamond wire'], maxAir: 240,
		reserve: 0.5, tolUg: 200, tolFraction: null
	},
	{
		prefix: 'ICE', name: 'Interstellar-ice analogue runs', kind: 'laboratory_analogue',
		description: 'Residues of labelled-carbon ices irradiated in the vacuum chamber, recovered on sample windows.',
		atmospheres: ['vacuum', 'argon glovebox'], materials: ['MgF2 window', 'gold foil', 'PTFE'], maxAir: 10,
		reserve: 0.25, tolUg: 2, tolFraction: null
	}
] as const;

function inDays(days: number): string {
	return new Date(Date.now() + days * 86_400_000).toISOString().slice(0, 10);
}

export const DEMO_BALANCES = [
	{ name: 'Tamberlow UM-1 ultramicro', model: 'ultramicro balance, 0.1 µg', location: 'Nitrogen glovebox A', d: 0.1, s: 0.25, capacity: 2_100_000, dueDays: 150 },
	{ name: 'Tamberlow MB-2 micro', model: 'microbalance, 1 µg', location: 'Nitrogen glovebox B', d: 1, s: 0.4, capacity: 6_100_000, dueDays: 220 },
	{ name: 'Vessant SM-3 semi-micro', model: 'semi-micro balance, 10 µg', location: 'Cleanroom 2', d: 10, s: 8, capacity: 220_000_000, dueDays: 90 }
] as const;

/** A fixed pseudo-random sequence, so the demo trees come out the same on every fresh database. */
function sequence(seed: number) {
	let x = seed;
	return (lo: number, hi: number) => {
		x = (x * 1103515245 + 12345) % 2147483648;
		return lo + (x % (hi - lo + 1));
	};
}

async function balanceId(sq: Sequelize, name: string): Promise<string> {
	const [b] = await sq.query<{ id: string }>('SELECT id FROM balances WHERE lower(name) = lower(:name)', { type: QueryTypes.SELECT, replacements: { name } });
	return b.id;
}

/** Splits `code` into children of the given masses, reweighing the parent on `balance`. */
async function split(sq: Sequelize, who: Who, code: string, masses: number[], balance: string, lossUg: number) {
	const [p] = await sq.query<{ mass_ug: number }>('SELECT mass_ug FROM items WHERE code = :code', { type: QueryTypes.SELECT, replacements: { code } });
	const after = p.mass_ug - masses.reduce((a, m) => a + m, 0) - lossUg;
	const r = await splitItem(sq, who, code, {
		children: masses.map((massUg) => ({ massUg, container: 'PTFE vial, crimp-sealed' })),
		parentAfterUg: after,
		balanceId: balance,
		reason: 'demo split by the curation team'
	});
	return r.children.map((c) => c.code);
}

async function placeOnLoan(sq: Sequelize, code: string, labName: string) {
	await sq.transaction(async (t) => {
		const [row] = await sq.query<{ id: string; lab: string }>(
			`UPDATE items SET state = 'on_loan', holder_lab_id = (SELECT id FROM labs WHERE name = :lab), updated_at = now()
			 WHERE code = :code RETURNING id, holder_lab_id AS lab`,
			{ type: QueryTypes.SELECT, replacements: { code, lab: labName }, transaction: t }
		);
		await appendTrail(sq, t, {
			actor: SYSTEM_ACTOR, action: 'item.placed_on_loan', subjectType: 'item', subjectId: row.id,
			before: { state: 'stored', holder: null }, after: { code, state: 'on_loan', holderLabId: row.lab, note: 'demo loan' }
		});
	});
}

async function seedTarnwick(sq: Sequelize, who: Who, um: string, mb: string) {
	const rnd = sequence(4242);
	const a = await registerSpecimen(sq, who, {
		collection: 'TRN', massUg: 2_184_000, description: 'Cell 1 bulk regolith, dark fine-grained material with mm-sized clasts',
		container: 'Sealed return cell 1, nitrogen backfilled', storagePlace: 'Nitrogen cabinet N2-1, shelf 1', provenance: 'Lantern capsule, cell 1; opened in glovebox A',
		weighing: { balanceId: mb, tareUg: 0 }
	});
	const b = await registerSpecimen(sq, who, {
		collection: 'TRN', massUg: 1_226_000, description: 'Cell 2 bulk regolith, coarser grains with bright inclusions',
		container: 'Sealed return cell 2, nitrogen backfilled', storagePlace: 'Nitrogen cabinet N2-1, shelf 2', provenance: 'Lantern capsule, cell 2; opened in glovebox A',
		weighing: { balanceId: mb, tareUg: 0 }
	});
	// cell 1: eight first-level aliquots, then three more levels below the first three of them
	const level1 = await split(sq, who, a.code, Array.from({ length: 8 }, () => rnd(18_000, 42_000)), mb, 6);
	const level2: string[] = [];
	for (const code of level1.slice(0, 3)) level2.push(...(await split(sq, who, code, Array.from({ length: 4 }, () => rnd(2_500, 4_200)), mb, 3)));
	const level3: string[] = [];
	for (const code of level2.slice(0, 5)) level3.push(...(await split(sq, who, code, Array.from({ length: 3 }, () => rnd(450, 700)), um, 1)));
	for (const code of level3.slice(0, 4)) await split(sq, who, code, [rnd(90, 130), rnd(90, 130)], um, 0);
	// cell 2: six first-level aliquots, two of them split once more
	const bLevel1 = await split(sq, who, b.code, Array.from({ length: 6 }, () => rnd(12_000, 30_000)), mb, 4);
	for (const code of bLevel1.slice(0, 2)) await split(sq, who, code, [rnd(3_000, 5_000), rnd(3_000, 5_000), rnd(3_000, 5_000)], mb, 2);
	// aliquots that were not split further go out on loan
	await placeOnLoan(sq, level2[6], 'Fennick Organics Lab');
	await placeOnLoan(sq, level2[7], 'Fennick Organics Lab');
	await placeOnLoan(sq, bLevel1[5], 'Marrow Isotope Group');
}

async function seedHollinsFord(sq: Sequelize, who: Who, sm: string, mb: string) {
	const main = await registerSpecimen(sq, who, {
		collection: 'HLF', massUg: 212_400_000, description: 'Main mass, fusion-crusted on three faces',
		container: 'Nitrogen-purged PTFE jar', storagePlace: 'Cleanroom 2, cabinet C-4', provenance: 'Recovered from a pasture near Hollins Ford two days after the fall', weighing: { balanceId: sm }
	});
	await registerSpecimen(sq, who, { collection: 'HLF', massUg: 8_730_000, description: 'Fragment F1, broken face exposing matrix', container: 'PTFE jar', storagePlace: 'Cleanroom 2, cabinet C-4', weighing: { balanceId: sm } });
	await registerSpecimen(sq, who, { collection: 'HLF', massUg: 3_115_000, description: 'Fragment F2, partly crusted', container: 'PTFE jar', storagePlace: 'Cleanroom 2, cabinet C-4', weighing: { balanceId: sm } });
	const chips = await split(sq, who, main.code, [1_250_000, 980_000, 1_020_000, 640_000], sm, 150);
	const powders = await split(sq, who, chips[0], [48_000, 52_000, 50_000, 45_000], mb, 40);
	await placeOnLoan(sq, powders[0], 'Marrow Isotope Group');
	await placeOnLoan(sq, powders[1], 'Fennick Organics Lab');
}

async function seedIceRuns(sq: Sequelize, who: Who, um: string) {
	const runs = [
		{ massUg: 184, description: 'Run 7 residue on MgF2 window W-07 (H2O:CH3OH:NH3 ice, 13C-labelled)' },
		{ massUg: 96, description: 'Run 9 residue on MgF2 window W-09 (H2O:CO:NH3 ice, 13C-labelled)' },
		{ massUg: 2_310, description: 'Run 12 residue pooled from three windows (H2O:CH3OH ice, 13C-labelled)' }
	];
	const codes: string[] = [];
	for (const r of runs) {
		const below = r.massUg < 500;
		const item = await registerSpecimen(sq, who, {
			collection: 'ICE', massUg: r.massUg, description: r.description, container: 'Window holder in argon-filled can', storagePlace: 'Freezer −20 °C, rack V',
			provenance: 'Vacuum chamber VC-2, irradiation campaign 2', weighing: { balanceId: um, ...(below ? { reason: 'residue mass is inherently small; weighed by difference on the window' } : {}) }
		});
		codes.push(item.code);
	}
	await registerSpecimen(sq, who, { collection: 'ICE', kind: 'blank', massUg: 1, description: 'Procedural blank window carried through run 12', container: 'Window holder', storagePlace: 'Freezer −20 °C, rack V' });
	await splitItem(sq, who, codes[2], { children: [{ massUg: 700 }, { massUg: 650 }], balanceId: um, parentAfterUg: 2_310 - 1_350 - 1, reason: 'demo split' });
}

/**
 * Collections, balances and demo trees (DESIGN §5). Idempotent: a collection's items are only
 * seeded while it has none, and rows are found by their natural keys.
 */
export async function seedRegistry(sq: Sequelize, log: (s: string) => void = () => {}) {
	await sq.transaction(async (t) => {
		for (const c of DEMO_COLLECTIONS) {
			const [row] = await sq.query<{ id: string }>(
				`INSERT INTO collections (prefix, name, kind, description, allowed_atmospheres, allowed_contact_materials, max_air_exposure_min,
				                          reserve_fraction, loss_tolerance_ug, loss_tolerance_fraction)
				 VALUES (:prefix, :name, :kind, :description, CAST(:atm AS text[]), CAST(:mat AS text[]), :maxAir, :reserve, :tolUg, :tolFraction)
				 ON CONFLICT (prefix) DO NOTHING RETURNING id`,
				{
					type: QueryTypes.SELECT, transaction: t,
					replacements: { ...c, atm: `{${c.atmospheres.map((s) => JSON.stringify(s)).join(',')}}`, mat: `{${c.materials.map((s) => JSON.stringify(s)).join(',')}}` }
				}
			);
			if (row) await appendTrail(sq, t, { actor: SYSTEM_ACTOR, action: 'collection.created', subjectType: 'collection', subjectId: row.id, after: c });
		}
		for (const b of DEMO_BALANCES) {
			const found = await sq.query<{ id: string; capacity_ug: string | null }>('SELECT id, capacity_ug FROM balances WHERE lower(name) = lower(:name)', { type: QueryTypes.SELECT, replacements: { name: b.name }, transaction: t });
			if (found.length) {
				// a demo balance made before capacities were recorded gets the demo's capacity, once
				if (found[0].capacity_ug === null) {
					await sq.query('UPDATE balances SET capacity_ug = :capacity, updated_at = now() WHERE id = :id', { replacements: { id: found[0].id, capacity: b.capacity }, transaction: t });
					await appendTrail(sq, t, { actor: SYSTEM_ACTOR, action: 'balance.updated', subjectType: 'balance', subjectId: found[0].id, before: { capacityUg: null }, after: { capacityUg: b.capacity } });
				}
				continue;
			}
			const [row] = await sq.query<{ id: string }>(
				`INSERT INTO balances (name, model, location, readability_ug, repeatability_ug, calibration_due, capacity_ug) VALUES (:name, :model, :location, :d, :s, :due, :capacity) RETURNING id`,
				{ type: QueryTypes.SELECT, transaction: t, replacements: { ...b, due: inDays(b.dueDays) } }
			);
			await appendTrail(sq, t, { actor: SYSTEM_ACTOR, action: 'balance.created', subjectType: 'balance', subjectId: row.id, after: { ...b, due: inDays(b.dueDays) } });
		}
	});
	const [curator] = await sq.query<{ id: string; email: string }>(`SELECT id, email FROM users WHERE email = 'curator@brightwater.example'`, { type: QueryTypes.SELECT });
	const who: Who = curator ? { id: curator.id, label: curator.email, role: 'curator', labId: null } : SYSTEM_WHO;
	const [um, mb, sm] = await Promise.all(DEMO_BALANCES.map((b) => balanceId(sq, b.name)));
	const empty = async (prefix: string) =>
		(await sq.query(`SELECT 1 FROM items i JOIN collections c ON c.id = i.collection_id WHERE c.prefix = :prefix LIMIT 1`, { type: QueryTypes.SELECT, replacements: { prefix } })).length === 0;
	if (await empty('TRN')) await seedTarnwick(sq, who, um, mb);
	if (await empty('HLF')) await seedHollinsFord(sq, who, sm, mb);
	if (await empty('ICE')) await seedIceRuns(sq, who, um);
	log('demo collections, balances and specimen trees present');
}
