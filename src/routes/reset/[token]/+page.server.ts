import { passwordLinkPage } from '$lib/server/password-pages';
import type { Actions, PageServerLoad } from './$types';

const page = passwordLinkPage('reset');
export const load: PageServerLoad = page.load;
export const actions: Actions = { default: page.action };
