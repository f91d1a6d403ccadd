// A blank-control table names its samples and blanks by item code: in the current form, in the older
// form with a hyphen before the check character, or mixed; every row comes out with the code written
// PREFIX-NNNNN/C, so one item is one item whichever form its rows use.
import { describe, it, expect } from 'vitest';
import { parseBlankControlCsv } from '../../src/lib/server/blank-reports/parse';
import { formatCode, legacyCode } from '../../src/lib/domain/codes';

const csv = (lines: string[]) => new TextEncoder().encode(['analyte,enantiomer,sample_or_blank,replicate,value,unit,uncertainty', ...lines].join('\n') + '\n');

describe('item codes in a blank-control table', () => {
	it('reads both forms as the same code', () => {
		const sample = formatCode('TRN', 11);
		const blank = formatCode('TRN', 41);
		const { rows } = parseBlankControlCsv(
			csv([`alanine,L,${sample},1,12.4,nmol/g,0.6`, `alanine,L,${legacyCode(sample)},2,12.1,nmol/g,0.6`, `alanine,L,${legacyCode(blank).toLowerCase()},1,0.9,nmol/g,`])
		);
		expect(rows.map((r) => r.code)).toEqual([sample, sample, blank]);
	});

	it('still refuses a wrong check character in the older form, naming row and column', () => {
		const right = legacyCode(formatCode('TRN', 11));
		const wrong = right.slice(0, -1) + (right.endsWith('0') ? '1' : '0');
		expect(() => parseBlankControlCsv(csv([`alanine,L,${wrong},1,12.4,nmol/g,0.6`]))).toThrow(/sample_or_blank|check character/);
	});
});
