#!/usr/bin/env node
// `npx regolog-verify bundle.ndjson`: verifies an exported trail bundle offline, with the same rules
// as the server (src/lib/domain/trail-verify.ts). Exit status 0 when intact, 1 when broken, 2 on bad use.
import { register } from 'tsx/esm/api';
import { fileURLToPath } from 'node:url';

register();
const { verifyCli } = await import(fileURLToPath(new URL('../src/lib/server/trail/bundle-file.ts', import.meta.url)));
process.exitCode = await verifyCli(process.argv.slice(2));
