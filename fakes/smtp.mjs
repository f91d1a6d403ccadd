// Local SMTP server for development and tests: accepts every message on loopback and keeps it
// as an .eml file in a folder, where the app's tests and a curious developer can read it.
// Usage: node fakes/smtp.mjs --port 54312 --dir .regolog/dev/mail
import { SMTPServer } from 'smtp-server';
import { mkdirSync, createWriteStream, renameSync } from 'node:fs';
import { join } from 'node:path';
import { randomUUID } from 'node:crypto';
import { parseArgs } from 'node:util';

export function startSmtp({ port, dir }) {
	mkdirSync(dir, { recursive: true });
	const server = new SMTPServer({
		secure: false,
		authOptional: true,
		disabledCommands: ['STARTTLS'],
		logger: false,
		size: 25 * 1024 * 1024,
		onData(stream, session, callback) {
			const name = `${Date.now()}-${randomUUID()}`;
			const partial = join(dir, `${name}.part`);
			const out = createWriteStream(partial);
			stream.pipe(out);
			out.on('finish', () => {
				// The final name appears only once the whole message is on disk.
				renameSync(partial, join(dir, `${name}.eml`));
				callback();
			});
			out.on('error', (e) => callback(e));
		}
	});
	return new Promise((resolve, reject) => {
		server.once('error', reject);
		server.listen(port, '127.0.0.1', () => resolve(server));
	});
}

if (import.meta.url === `file://${process.argv[1]}`) {
	const { values } = parseArgs({
		options: {
			port: { type: 'string', default: '54312' },
			dir: { type: 'string', default: '.regolog/dev/mail' }
		}
	});
	const server = await startSmtp({ port: Number(values.port), dir: values.dir });
	console.log(`fake SMTP listening on 127.0.0.1:${values.port}, messages in ${values.dir}`);
	const stop = () => server.close(() => process.exit(0));
	process.on('SIGTERM', stop);
	process.on('SIGINT', stop);
}
