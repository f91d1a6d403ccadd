import { QueryTypes, type Sequelize } from 'sequelize';
import { ROLE_LABELS, type Role, type SessionUser } from './auth/types';
import { demoPassword } from './seed';
import { createRequest, declineRequest, earmarkItem, grantRequest, startReview, withdrawRequest } from './custody/requests';
import { cancelTransfer, prepareTransfer, signTransfer } from './custody/transfers';
import { submitUsage } from './custody/usage';
import { splitItem } from './registry/split';
import { whoFrom } from './registry/common';
import { seedPlannerDemo } from './offer/seed';

async function demoUser(sq: Sequelize, email: string): Promise<SessionUser | null> {
	const [u] = await sq.query<{ id: string; email: string; name: string; role: Role; lab_id: string | null; lab_name: string | null }>(
		`SELECT u.id, u.email, u.name, u.role, u.lab_id, l.name AS lab_name FROM users u LEFT JOIN labs l ON l.id = u.lab_id WHERE u.email = :email AND u.active`,
		{ type: QueryTypes.SELECT, replacements: { email } }
	);
	return u ? { id: u.id, email: u.email, name: u.name, role: u.role, roleLabel: ROLE_LABELS[u.role], labId: u.lab_id, labName: u.lab_name } : null;
}

/** The largest piece of a collection stored at the facility, to split demo aliquots from. */
async function stock(sq: Sequelize, prefix: string): Promise<string> {
	const [r] = await sq.query<{ code: string }>(
		`SELECT i.code FROM items i JOIN collections c ON c.id = i.collection_id
		 WHERE c.prefix = :prefix AND i.state = 'stored' AND i.holder_lab_id IS NULL AND i.kind <> 'blank' ORDER BY i.mass_ug DESC LIMIT 1`,
		{ type: QueryTypes.SELECT, replacements: { prefix } }
	);
	return r.code;
}

const plan = (what: string) => `${what}. Sub-sampling under nitrogen, solvent extraction and derivatisation, then measurement with replicate procedural blanks carried alongside.`;
const why = (what: string) => `${what}; the aliquot size is the smallest that gives replicate measurements above the blank-derived limits.`;
const packing = { container: 'Crimp-sealed PTFE vial in a steel secondary can', seal: 'BW-S-0000', atmosphere: 'dry nitrogen, sealed in glovebox GB-1', temperature: 'below −20 °C', coolant: 'dry_ice' as const, dryIceNetG: 2500, carrier: 'Corvane Courier (invented)', note: '' };

/**
 * Requests in every state and transfers in every state for both demo labs, made through the same
 * services the app uses (so the trail, ledger and notifications are real). Runs once: it does
 * nothing when any request exists.
 */
export async function seedCustody(sq: Sequelize, log: (s: string) => void = () => {}) {
	const [{ n }] = await sq.query<{ n: number }>('SELECT count(*)::int AS n FROM allocation_requests', { type: QueryTypes.SELECT });
	if (n > 0) return;
	const [curator, admin, fennick, marrow] = await Promise.all(
		['curator@brightwater.example', 'admin@brightwater.example', 'analyst@fennick.example', 'analyst@marrow.example'].map((e) => demoUser(sq, e))
	);
	if (!curator || !admin || !fennick || !marrow) return; // demo accounts not seeded
	const pw = demoPassword();
	const ask = (u: SessionUser, collection: string, massUg: number, what: string, submit = true, destructive = true) =>
		createRequest(sq, u, { collection, massUg, analysisPlan: plan(what), techniques: ['chiral GC-MS'], destructive, returnPlan: destructive ? 'Residue returned in its vial' : 'Whole aliquot returned', justification: why(what), submit });
	const aliquot = async (prefix: string, massUg: number) => {
		const r = await splitItem(sq, whoFrom(curator), await stock(sq, prefix), { children: [{ massUg, container: 'PTFE vial, crimp-sealed' }] });
		return r.children[0].code as string;
	};
	const ship = async (requestId: string, prefix: string, massUg: number, tracking: string) => {
		await earmarkItem(sq, curator, requestId, { itemCode: await aliquot(prefix, massUg) });
		return prepareTransfer(sq, curator, { requestId, ...packing, trackingRef: tracking });
	};
	const sign = (u: SessionUser, id: string, meaning: Parameters<typeof signTransfer>[3]['meaning'], note = '') => signTransfer(sq, u, id, { meaning, password: pw, note });

	await ask(fennick, 'TRN', 1_500, 'Amino-acid enantiomer survey of cell 1 fines', false);
	await ask(marrow, 'HLF', 20_000, 'Bulk carbon and nitrogen isotope ratios of matrix');
	const inReview = await ask(fennick, 'ICE', 120, 'Search for sugar-related compounds in run 12 residue');
	await startReview(sq, curator, inReview);
	const declined = await ask(marrow, 'TRN', 80_000, 'Whole-rock isotope survey');
	await declineRequest(sq, curator, declined, { reason: 'More than the reserve allows for a survey; please ask for 2 mg with a focused plan.' });
	const withdrawn = await ask(fennick, 'HLF', 4_000, 'Soluble organics screening');
	await withdrawRequest(sq, fennick, withdrawn);

	// Granted, aliquot set aside, transfer prepared (to dispatch).
	const prepared = await ask(marrow, 'HLF', 5_000, 'Clumped-isotope measurement of carbonate veins');
	await grantRequest(sq, curator, prepared, { grantedUg: 5_000 });
	await ship(prepared, 'HLF', 5_000, 'CV-20261130-11');

	// Granted and dispatched, awaiting the lab's receipt.
	const dispatched = await ask(fennick, 'HLF', 3_000, 'Amino acids of the matrix, hot-water extract');
	await grantRequest(sq, curator, dispatched, { grantedUg: 3_000 });
	await sign(curator, await ship(dispatched, 'HLF', 3_000, 'CV-20261129-07'), 'dispatched');

	// Received: on loan, usage report due.
	const fulfilled = await ask(fennick, 'TRN', 500, 'Enantiomeric excess of isovaline and alanine in cell 1 fines');
	await grantRequest(sq, curator, fulfilled, { grantedUg: 500, note: 'Handle under nitrogen only.' });
	const t3 = await ship(fulfilled, 'TRN', 500, 'CV-20261120-02');
	await sign(curator, t3, 'dispatched');
	await sign(fennick, t3, 'received_intact');

	// Closed: used, residue returned and signed for.
	const closed = await ask(marrow, 'HLF', 2_000, 'Oxygen isotopes of magnetite separates', true, true);
	await grantRequest(sq, curator, closed, { grantedUg: 2_000 });
	const t4 = await ship(closed, 'HLF', 2_000, 'CV-20261101-04');
	await sign(curator, t4, 'dispatched');
	await sign(marrow, t4, 'received_damaged', 'Outer can dented; vial and seal intact.');
	const [a4] = await sq.query<{ code: string }>(`SELECT i.code FROM allocation_items ai JOIN items i ON i.id = ai.item_id WHERE ai.request_id = :r`, { type: QueryTypes.SELECT, replacements: { r: closed } });
	await submitUsage(sq, marrow, closed, { itemCode: a4.code, consumedUg: 1_400, returnedUg: 600, lostUg: 0, resultsSummary: 'δ18O of three magnetite separates measured in duplicate; residue returned.' });
	const back = await prepareTransfer(sq, marrow, { itemCodes: [a4.code], ...packing, coolant: 'none', dryIceNetG: null, temperature: 'ambient', trackingRef: 'CV-20261115-09' });
	await sign(marrow, back, 'dispatched');
	await sign(curator, back, 'received_intact');

	// Refused on arrival, and a cancelled transfer.
	const refused = await ask(marrow, 'TRN', 400, 'Noble-gas release of cell 2 grains', true, false);
	await grantRequest(sq, curator, refused, { grantedUg: 400 });
	const t5 = await ship(refused, 'TRN', 400, 'CV-20261125-13');
	await sign(curator, t5, 'dispatched');
	await sign(marrow, t5, 'refused', 'Dry ice fully sublimated on arrival; can warm. Refused to protect the sample.');
	const cancelled = await ask(fennick, 'HLF', 1_000, 'Chiral LC of hydroxy acids');
	await grantRequest(sq, admin, cancelled, { grantedUg: 1_000 });
	await cancelTransfer(sq, curator, await ship(cancelled, 'HLF', 1_000, ''));
	await seedPlannerDemo(sq, curator, fennick, marrow);
	log('demo requests and transfers present');
}
