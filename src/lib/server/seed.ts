import type { Sequelize } from 'sequelize';

/**
 * The demo scenario of the Brightwater Curation Facility (invented). Idempotent: every row is
 * written with ON CONFLICT so a second run changes nothing.
 */
export async function seedDemo(sequelize: Sequelize, opts: { log?: (s: string) => void } = {}) {
	const log = opts.log ?? (() => {});
	const settings: Record<string, unknown> = {
		'facility.name': 'Brightwater Curation Facility',
		'facility.short_name': 'Brightwater',
		'reserve.default_fraction': 0.75
	};
	for (const [key, value] of Object.entries(settings)) {
		await sequelize.query(
			`INSERT INTO settings (key, value) VALUES (:key, CAST(:value AS jsonb)) ON CONFLICT (key) DO NOTHING`,
			{ replacements: { key, value: JSON.stringify(value) } }
		);
	}
	log('demo settings present');
}
