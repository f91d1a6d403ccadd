import { describe, it, expect } from 'vitest';
import { cautionText, coolantCaution, handlingCautions, isSharpTool } from '../../src/lib/cautions';

// Regolog's own safety wording (DESIGN §7): no published source; these check where each caution goes.
describe('coolant cautions', () => {
	it('covers dry ice and dry shippers and nothing else, each deferring to the carrier, the safety officers and local regulations', () => {
		expect(coolantCaution('none')).toBeNull();
		expect(coolantCaution('cold_packs')).toBeNull();
		expect(coolantCaution(undefined)).toBeNull();
		for (const c of ['dry_ice', 'dry_shipper']) {
			const caution = coolantCaution(c)!;
			expect(caution.key).toBe(c);
			expect(caution.defer).toMatch(/carrier's dangerous-goods rules/);
			expect(caution.defer).toMatch(/safety officers/);
			expect(caution.defer).toMatch(/local regulations/);
			expect(cautionText(caution)).toEqual([caution.title, ...caution.lines, caution.defer]);
		}
	});

	it('calls dry ice a dangerous good, and a dry shipper one that may be, as the carrier decides', () => {
		const ice = cautionText(coolantCaution('dry_ice')!).join(' ');
		expect(ice).toMatch(/Dry ice is a dangerous good/);
		expect(ice).toMatch(/net mass/);
		const shipper = cautionText(coolantCaution('dry_shipper')!).join(' ');
		expect(shipper).toMatch(/liquid nitrogen/i);
		expect(shipper).toMatch(/may be a dangerous good in transport, as the carrier decides/);
		expect(shipper).not.toMatch(/is a dangerous good/);
	});
});

describe('handling cautions', () => {
	it('follows the atmosphere: gloveboxes (pressure and gloves) and vacuum chambers', () => {
		expect(handlingCautions({ atmospheres: ['nitrogen_glovebox'] }).map((c) => c.key)).toEqual(['glovebox']);
		expect(handlingCautions({ atmospheres: ['argon glovebox'] }).map((c) => c.key)).toEqual(['glovebox']);
		expect(handlingCautions({ atmospheres: ['vacuum', 'argon glovebox'] }).map((c) => c.key)).toEqual(['glovebox', 'vacuum']);
		expect(handlingCautions({ atmospheres: ['cleanroom_air'] })).toEqual([]);
		const glovebox = cautionText(handlingCautions({ atmospheres: ['nitrogen_glovebox'] })[0]).join(' ');
		expect(glovebox).toMatch(/over-pressure/);
		expect(glovebox).toMatch(/under-pressure/);
		expect(glovebox).toMatch(/pinholes/);
	});

	it('adds cutting and sharp tools for a split and for a sharp tool in the session', () => {
		expect(handlingCautions({ atmospheres: [], cutting: true }).map((c) => c.key)).toEqual(['cutting']);
		expect(handlingCautions({ atmospheres: ['cleanroom_air'], tools: ['Diamond wire saw'] }).map((c) => c.key)).toEqual(['cutting']);
		expect(handlingCautions({ atmospheres: ['cleanroom_air'], tools: ['PTFE-tipped tweezers', 'Spatula, 316L'] })).toEqual([]);
		expect(isSharpTool('Scalpel, No. 11 blade')).toBe(true);
		expect(isSharpTool('Fused silica dish')).toBe(false);
	});
});
