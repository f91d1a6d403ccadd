import { describe, it, expect } from 'vitest';
import { atmosphereClass, rulesOf } from '../../src/lib/domain/handling';
import { handlingMark } from '../../src/lib/domain/labels';

// Regolog's own reading of a collection's wording (common practice, no published source)
describe('atmosphere names are matched whatever their case', () => {
	it('maps "Argon glovebox", "ARGON" and "Ar" to the argon class, and "ar" inside words to none', () => {
		expect(atmosphereClass('Argon glovebox')).toBe('argon_glovebox');
		expect(atmosphereClass('ARGON')).toBe('argon_glovebox');
		expect(atmosphereClass('Ar glovebox')).toBe('argon_glovebox');
		expect(atmosphereClass('Nitrogen glovebox')).toBe('nitrogen_glovebox');
		expect(atmosphereClass('dry star chamber')).toBeNull();
		expect(rulesOf(['Argon glovebox', 'Vacuum'], 0).allowedAtmospheres).toEqual(['argon_glovebox', 'vacuum']);
	});

	it('keeps the argon mark on the label for "Argon glovebox"', () => {
		expect(handlingMark({ allowedAtmospheres: ['Argon glovebox'], maxAirExposureMin: 0 })).toBe('Ar only · no air');
		expect(handlingMark({ allowedAtmospheres: ['Nitrogen glovebox', 'Argon glovebox'], maxAirExposureMin: 0 })).toBe('N₂/Ar only · no air');
		expect(handlingMark({ allowedAtmospheres: ['Helium glovebox'], maxAirExposureMin: 0 })).toBe('He only · no air');
	});
});
