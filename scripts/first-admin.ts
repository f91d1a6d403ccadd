// `npm run admin:first -- --email it@facility.example --name "Dana Example"`: the first administrator
// of a database that has none (production, where no demo account is made). Queues the invitation
// mail and prints its link, which works once and for 24 hours; refused once an administrator exists.
// Exit status: 0 invited, 1 refused (an administrator exists, the address is taken), 2 bad use.
import { parseArgs } from 'node:util';
import { closeDb } from '../src/lib/server/db';
import { createFirstAdmin, firstAdminSchema } from '../src/lib/server/accounts';
import { ApiProblem, zodFields } from '../src/lib/server/api';

let code = 0;
try {
	const { values } = parseArgs({ options: { email: { type: 'string' }, name: { type: 'string' } }, strict: true });
	const parsed = firstAdminSchema.safeParse({ email: values.email ?? '', name: values.name ?? '' });
	if (!parsed.success) {
		for (const [k, v] of Object.entries(zodFields(parsed.error.issues))) console.error(`admin:first: --${k}: ${v}`);
		console.error('usage: npm run admin:first -- --email <address> --name "<full name>"');
		code = 2;
	} else {
		const { user, link } = await createFirstAdmin(parsed.data);
		console.log(`invited ${user.email} as the first administrator; the invitation is queued as mail.`);
		console.log(`choose the password at ${link} (works once, for 24 hours)`);
	}
} catch (e) {
	if (e instanceof ApiProblem) {
		console.error(`admin:first: ${e.message}`);
		code = 1;
	} else if ((e as { code?: string }).code?.startsWith('ERR_PARSE_ARGS')) {
		console.error(`admin:first: ${(e as Error).message}`);
		code = 2;
	} else throw e;
} finally {
	await closeDb();
}
process.exitCode = code;
