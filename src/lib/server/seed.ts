import { QueryTypes, type Sequelize } from 'sequelize';
import { hashPassword } from './auth/password';
import { appendTrail, SYSTEM_ACTOR } from './trail';
import { seedRegistry } from './seed-registry';
import { seedCustody } from './seed-custody';
import { seedBlankControlDemo } from './blank-reports/demo';
import { seedOfferDocuments } from './offer/demo-documents';
import { seedHandling } from './handling/seed';

export const DEMO_LABS = [
	{ name: 'Fennick Organics Lab', shortName: 'Fennick', institution: 'Fennick Institute (invented)', contactEmail: 'lab@fennick.example' },
	{ name: 'Marrow Isotope Group', shortName: 'Marrow', institution: 'Marrow University (invented)', contactEmail: 'group@marrow.example' },
	{ name: 'Quillon Mineralogy Lab', shortName: 'Quillon', institution: 'Quillon Polytechnic (invented)', contactEmail: 'lab@quillon.example' }
];

export const DEMO_USERS = [
	{ email: 'admin@brightwater.example', name: 'Ada Penhallow', role: 'admin', lab: null },
	{ email: 'curator@brightwater.example', name: 'Corin Ashdown', role: 'curator', lab: null },
	{ email: 'auditor@brightwater.example', name: 'Imre Valcourt', role: 'auditor', lab: null },
	{ email: 'analyst@fennick.example', name: 'Lena Fennick-Ortiz', role: 'lab_member', lab: 'Fennick Organics Lab' },
	{ email: 'analyst@marrow.example', name: 'Tobias Marrow-Hale', role: 'lab_member', lab: 'Marrow Isotope Group' }
] as const;

export function demoPassword(): string {
	return process.env.REGOLOG_DEMO_PASSWORD || 'brightwater-demo';
}

/**
 * The demo scenario of the Brightwater Curation Facility (invented). Idempotent: rows are
 * found by their natural keys and only created when missing, so a second run changes nothing.
 */
export async function seedDemo(sequelize: Sequelize, opts: { log?: (s: string) => void; accounts?: boolean } = {}) {
	const log = opts.log ?? (() => {});
	const production = process.env.NODE_ENV === 'production';
	const accounts = opts.accounts ?? (!production || process.env.REGOLOG_SEED_DEMO_ACCOUNTS === 'yes');

	await sequelize.transaction(async (t) => {
		const settings: Record<string, unknown> = {
			'facility.name': 'Brightwater Curation Facility',
			'facility.short_name': 'Brightwater',
			'reserve.default_fraction': 0.75
		};
		for (const [key, value] of Object.entries(settings)) {
			await sequelize.query(
				`INSERT INTO settings (key, value) VALUES (:key, CAST(:value AS jsonb)) ON CONFLICT (key) DO NOTHING`,
				{ replacements: { key, value: JSON.stringify(value) }, transaction: t }
			);
		}

		const labIds = new Map<string, string>();
		for (const lab of DEMO_LABS) {
			const found = await sequelize.query<{ id: string }>('SELECT id FROM labs WHERE lower(name) = lower(:name)', {
				type: QueryTypes.SELECT, replacements: { name: lab.name }, transaction: t
			});
			if (found.length) {
				labIds.set(lab.name, found[0].id);
				continue;
			}
			const [row] = await sequelize.query<{ id: string }>(
				`INSERT INTO labs (name, short_name, institution, contact_email) VALUES (:name, :shortName, :institution, :contactEmail) RETURNING id`,
				{ type: QueryTypes.SELECT, replacements: lab, transaction: t }
			);
			labIds.set(lab.name, row.id);
			await appendTrail(sequelize, t, { actor: SYSTEM_ACTOR, action: 'lab.created', subjectType: 'lab', subjectId: row.id, after: lab });
		}

		if (!accounts) {
			log('demo accounts not created (NODE_ENV=production; set REGOLOG_SEED_DEMO_ACCOUNTS=yes to allow)');
			return;
		}
		const hash = await hashPassword(demoPassword());
		for (const u of DEMO_USERS) {
			const found = await sequelize.query('SELECT 1 FROM users WHERE email = :email', {
				type: QueryTypes.SELECT, replacements: { email: u.email }, transaction: t
			});
			if (found.length) continue;
			const labId = u.lab ? labIds.get(u.lab)! : null;
			const [row] = await sequelize.query<{ id: string }>(
				`INSERT INTO users (email, name, role, lab_id, password_hash) VALUES (:email, :name, :role, :labId, :hash) RETURNING id`,
				{ type: QueryTypes.SELECT, replacements: { email: u.email, name: u.name, role: u.role, labId, hash }, transaction: t }
			);
			await appendTrail(sequelize, t, {
				actor: SYSTEM_ACTOR, action: 'user.created', subjectType: 'user', subjectId: row.id,
				after: { email: u.email, name: u.name, role: u.role, labId }
			});
		}
	});
	log('demo facility, labs and accounts present');
	await seedRegistry(sequelize, log);
	await seedHandling(sequelize, log);
	await seedBlankControlDemo(sequelize, log);
	await seedOfferDocuments(sequelize, log);
	if (accounts) await seedCustody(sequelize, log);
}
