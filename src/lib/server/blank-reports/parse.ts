import { parse, CsvError } from 'csv-parse/sync';
import { parseCode } from '../../domain/codes';
import { aminoAcid } from '../../domain/blanks';
import { ApiProblem } from '../api';
import { COLUMNS, OPTIONAL_COLUMNS, analyteKey, type ParsedRow } from '../../domain/blank-report';

/** One problem in an uploaded table: the row is the line of the file (the header is row 1). */
export interface CsvIssue {
	row: number;
	column: string | null;
	message: string;
}

const MAX_ISSUES = 25;
const MAX_ROWS = 20_000;

export function csvProblem(issues: CsvIssue[], code = 'invalid_csv'): ApiProblem {
	const where = (i: CsvIssue) => `row ${i.row}${i.column ? `, column ${i.column}` : ''}`;
	const first = issues[0];
	const more = issues.length > 1 ? ` (and ${issues.length - 1} more problem${issues.length > 2 ? 's' : ''})` : '';
	const fields: Record<string, string> = {};
	for (const i of issues) fields[where(i)] ??= i.message;
	return new ApiProblem(422, code, `${where(first)}: ${first.message}${more}. Nothing was stored.`, fields, { issues });
}

const NUMBER = /^[+-]?(\d+(\.\d*)?|\.\d+)([eE][+-]?\d+)?$/;

function readNumber(text: string): number | string {
	if (text === '') return 'is empty; a number is needed';
	if (/^[+-]?\d+,\d+$/.test(text)) return `"${text}" has a decimal comma; write the decimal point (for example ${text.replace(',', '.')})`;
	if (!NUMBER.test(text)) return `"${text.slice(0, 40)}" is not a number`;
	const n = Number(text);
	if (!Number.isFinite(n)) return `"${text.slice(0, 40)}" is too large`;
	return n;
}

export interface ParsedCsv {
	rows: ParsedRow[];
	/** what was accepted but is worth saying: a byte-order mark, an absent uncertainty column */
	notes: string[];
}

/**
 * Parses a blank-control table in Regolog's layout (see blank-report.ts) with csv-parse. Every
 * problem names its row and column; any problem refuses the whole file (an ApiProblem with up to
 * 25 issues), so nothing of a bad file is stored.
 */
export function parseBlankControlCsv(bytes: Uint8Array): ParsedCsv {
	const notes: string[] = [];
	let buf = Buffer.from(bytes.buffer, bytes.byteOffset, bytes.byteLength);
	if (buf.length === 0 || buf.toString('utf8').trim() === '') throw csvProblem([{ row: 1, column: null, message: 'the file is empty; the first row must be the header' }], 'empty_file');
	if ((buf[0] === 0xff && buf[1] === 0xfe) || (buf[0] === 0xfe && buf[1] === 0xff)) {
		throw csvProblem([{ row: 1, column: null, message: 'the file is UTF-16 text; save it as UTF-8 (CSV UTF-8)' }], 'invalid_encoding');
	}
	if (buf[0] === 0xef && buf[1] === 0xbb && buf[2] === 0xbf) {
		buf = buf.subarray(3);
		notes.push('The file began with a UTF-8 byte-order mark; it was ignored.');
	}
	let text: string;
	try {
		text = new TextDecoder('utf-8', { fatal: true }).decode(buf);
	} catch {
		throw csvProblem([{ row: 1, column: null, message: 'the file is not UTF-8 text; save it as UTF-8 (CSV UTF-8)' }], 'invalid_encoding');
	}

	let records: { record: string[]; info: { lines: number } }[];
	try {
		records = parse(text, { delimiter: ',', relax_column_count: true, skip_empty_lines: true, trim: true, info: true, to: MAX_ROWS + 2 }) as never;
	} catch (e) {
		if (e instanceof CsvError) {
			const line = (e as unknown as { lines?: number }).lines ?? 1;
			const what = e.code === 'CSV_QUOTE_NOT_CLOSED' ? 'a quoted value is not closed' : e.code === 'CSV_INVALID_CLOSING_QUOTE' ? 'a quote appears inside an unquoted value' : e.message.replace(/^[^:]*:\s*/, '');
			throw csvProblem([{ row: line, column: null, message: what }]);
		}
		throw e;
	}
	if (records.length > MAX_ROWS + 1) throw csvProblem([{ row: MAX_ROWS + 2, column: null, message: `the file has more than ${MAX_ROWS} data rows` }]);

	const header = records[0].record.map((h) => h.trim().toLowerCase());
	const headerLine = records[0].info.lines;
	if (header.length === 1) {
		const h = records[0].record[0];
		const sep = h.includes(';') ? 'semicolons (;)' : h.includes('\t') ? 'tabs' : h.includes('|') ? 'vertical bars (|)' : null;
		if (sep) throw csvProblem([{ row: headerLine, column: null, message: `the columns are separated by ${sep}; Regolog's layout separates them by commas (,)` }], 'wrong_delimiter');
	}
	const issues: CsvIssue[] = [];
	const missing = COLUMNS.filter((c) => !OPTIONAL_COLUMNS.includes(c) && !header.includes(c));
	const extra = header.filter((h) => !(COLUMNS as readonly string[]).includes(h));
	const seen = new Set<string>();
	for (const h of header) {
		if (seen.has(h)) issues.push({ row: headerLine, column: h, message: `the column "${h}" appears twice` });
		seen.add(h);
	}
	if (missing.length) issues.push({ row: headerLine, column: null, message: `missing column${missing.length > 1 ? 's' : ''} ${missing.join(', ')}; the header must be ${COLUMNS.join(',')}` });
	for (const x of extra) issues.push({ row: headerLine, column: x || '(empty)', message: `"${x}" is not a column of Regolog's layout (${COLUMNS.join(', ')})` });
	if (issues.length) throw csvProblem(issues, 'invalid_header');
	if (!header.includes('uncertainty')) notes.push('The file has no uncertainty column: sample values measured once have no stated uncertainty.');
	if (records.length === 1) throw csvProblem([{ row: headerLine + 1, column: null, message: 'the file has a header but no data rows' }], 'no_rows');

	const at = Object.fromEntries(header.map((h, i) => [h, i])) as Record<string, number>;
	const rows: ParsedRow[] = [];
	const add = (i: CsvIssue) => {
		if (issues.length < MAX_ISSUES) issues.push(i);
	};
	for (const { record, info } of records.slice(1)) {
		const row = info.lines;
		if (record.length !== header.length) {
			add({ row, column: null, message: `${record.length} value${record.length === 1 ? '' : 's'} where the header has ${header.length} columns` + (record.length === 1 && /[;\t|]/.test(record[0]) ? ' (the values seem to be separated by something other than commas)' : '') });
			continue;
		}
		const cell = (c: string) => (at[c] === undefined ? '' : record[at[c]].trim());
		let bad = false;
		const fail = (column: string, message: string) => {
			bad = true;
			add({ row, column, message });
		};

		const analyte = cell('analyte');
		if (!analyte) fail('analyte', 'is empty; name the analyte');
		else if (analyte.length > 80) fail('analyte', 'is longer than 80 characters');

		const e = cell('enantiomer').toUpperCase();
		if (e !== '' && e !== 'L' && e !== 'D') fail('enantiomer', `"${cell('enantiomer').slice(0, 20)}" is not L, D or empty`);
		const acid = analyte ? aminoAcid(analyte) : null;
		if ((e === 'L' || e === 'D') && acid && !acid.chiral) fail('enantiomer', `${acid.name} is achiral and has no enantiomers; leave the column empty`);

		const id = cell('sample_or_blank');
		const parsed = parseCode(id);
		if (!id) fail('sample_or_blank', 'is empty; give the item code of the sample or blank');
		else if (!parsed.ok) fail('sample_or_blank', `"${id.slice(0, 30)}" is not an item code: ${parsed.reason}`);

		const repText = cell('replicate');
		const rep = Number(repText);
		if (!/^\d+$/.test(repText) || !Number.isSafeInteger(rep) || rep < 1) fail('replicate', `"${repText.slice(0, 20)}" is not a whole number from 1`);

		const value = readNumber(cell('value'));
		if (typeof value === 'string') fail('value', value);
		else if (value < 0) fail('value', `${value} is negative; give the measured abundance (zero or more), not a blank-corrected value`);

		const unit = cell('unit');
		if (!unit) fail('unit', 'is empty; give the unit of the value');
		else if (unit.length > 20) fail('unit', 'is longer than 20 characters');

		const uText = cell('uncertainty');
		let u: number | null = null;
		if (uText !== '') {
			const n = readNumber(uText);
			if (typeof n === 'string') fail('uncertainty', n);
			else if (n < 0) fail('uncertainty', `${n} is negative; a standard uncertainty is zero or more`);
			else u = n;
		}
		if (bad) continue;
		rows.push({
			line: row,
			analyte,
			enantiomer: e === '' ? null : (e as 'L' | 'D'),
			code: (parsed as { ok: true; code: string }).code,
			replicate: rep,
			value: value as number,
			unit,
			uncertainty: u
		});
	}

	// across rows: one unit per analyte, enantiomers given for all rows of an analyte or none, no repeated replicate
	const firstOf = new Map<string, ParsedRow>();
	const keys = new Map<string, number>();
	for (const r of rows) {
		const a = analyteKey(r.analyte);
		const first = firstOf.get(a);
		if (!first) firstOf.set(a, r);
		else {
			if (first.unit !== r.unit) add({ row: r.line, column: 'unit', message: `"${r.unit}" differs from "${first.unit}" used for ${first.analyte} in row ${first.line}; one analyte takes one unit (nothing is converted)` });
			if ((first.enantiomer === null) !== (r.enantiomer === null)) {
				add({ row: r.line, column: 'enantiomer', message: `${r.analyte} has enantiomers in some rows and none in others (row ${first.line}); give L or D in every row of a chiral analyte, or leave all empty` });
			}
		}
		const k = `${a}|${r.enantiomer ?? ''}|${r.code}|${r.replicate}`;
		const dup = keys.get(k);
		if (dup !== undefined) add({ row: r.line, column: 'replicate', message: `replicate ${r.replicate} of ${r.analyte}${r.enantiomer ? ` (${r.enantiomer})` : ''} for ${r.code} is already in row ${dup}` });
		else keys.set(k, r.line);
	}
	if (issues.length) throw csvProblem(issues);
	return { rows, notes };
}
