import { Collection, Lab, models } from '$lib/server/models';
import { hasRole, CURATORS } from '$lib/server/auth/access';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ locals }) => {
	models();
	const staff = locals.user!.role !== 'lab_member';
	const [collections, labs] = await Promise.all([
		Collection.findAll({ attributes: ['prefix', 'name'], order: [['prefix', 'ASC']] }),
		staff ? Lab.findAll({ attributes: ['id', 'name'], order: [['name', 'ASC']] }) : Promise.resolve([])
	]);
	return {
		collections: collections.map((c) => ({ prefix: c.prefix, name: c.name })),
		labs: labs.map((l) => ({ id: l.id, name: l.name })),
		staff,
		canRegister: hasRole(locals.user!.role, CURATORS)
	};
};
