// Reads the messages the fake SMTP server kept, newest last.
import { readdirSync, readFileSync, existsSync } from 'node:fs';
import { join } from 'node:path';
import { simpleParser } from 'mailparser';

export async function readMailbox(dir) {
	if (!existsSync(dir)) return [];
	const files = readdirSync(dir).filter((f) => f.endsWith('.eml')).sort();
	const out = [];
	for (const f of files) {
		const parsed = await simpleParser(readFileSync(join(dir, f)));
		out.push({
			file: f,
			to: parsed.to ? [].concat(parsed.to).flatMap((a) => a.value.map((v) => v.address)) : [],
			from: parsed.from?.value?.[0]?.address ?? null,
			subject: parsed.subject ?? '',
			text: parsed.text ?? '',
			html: typeof parsed.html === 'string' ? parsed.html : ''
		});
	}
	return out;
}
