import { describe, it, expect } from 'vitest';
import { handlingMark } from '../../src/lib/domain/labels';

describe('handling mark from collection rules (Regolog presentation rule)', () => {
	it('names the protected atmosphere when no air is allowed', () => {
		expect(handlingMark({ allowedAtmospheres: ['nitrogen glovebox'], maxAirExposureMin: 0 })).toBe('N₂ only · no air');
		expect(handlingMark({ allowedAtmospheres: ['vacuum', 'argon glovebox'], maxAirExposureMin: 0 })).toBe('vac/Ar only · no air');
	});

	it('falls back to "no air" when an allowed atmosphere is not a protected one, or none is listed', () => {
		expect(handlingMark({ allowedAtmospheres: ['nitrogen glovebox', 'ISO 5 cleanroom air'], maxAirExposureMin: 0 })).toBe('no air');
		expect(handlingMark({ allowedAtmospheres: [], maxAirExposureMin: 0 })).toBe('no air');
		expect(handlingMark({ allowedAtmospheres: ['nitrogen glovebox', 'argon glovebox', 'vacuum'], maxAirExposureMin: 0 })).toBe('no air');
	});

	it('marks a short air limit and leaves long or absent limits to the item page', () => {
		expect(handlingMark({ allowedAtmospheres: ['vacuum', 'argon glovebox'], maxAirExposureMin: 10 })).toBe('air ≤ 10 min');
		expect(handlingMark({ allowedAtmospheres: ['ISO 5 cleanroom air'], maxAirExposureMin: 60 })).toBe('air ≤ 60 min');
		expect(handlingMark({ allowedAtmospheres: ['ISO 5 cleanroom air'], maxAirExposureMin: 240 })).toBeNull();
		expect(handlingMark({ allowedAtmospheres: [], maxAirExposureMin: null })).toBeNull();
	});

	it('does not read "air" inside a word as argon', () => {
		expect(handlingMark({ allowedAtmospheres: ['Arctic air'], maxAirExposureMin: 0 })).toBe('no air');
	});
});
