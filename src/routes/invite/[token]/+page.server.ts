import { passwordLinkPage } from '$lib/server/password-pages';
import type { Actions, PageServerLoad } from './$types';

const page = passwordLinkPage('invite');
export const load: PageServerLoad = page.load;
export const actions: Actions = { default: page.action };
