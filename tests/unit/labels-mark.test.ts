import { describe, it, expect } from 'vitest';
import { handlingMark, hazardMark, labelMark } from '../../src/lib/domain/labels';

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
		expect(handlingMark({ allowedAtmospheres: ['Outer-hall air'], maxAirExposureMin: 0 })).toBe('no air');
	});
});

describe('hazard mark from storage and coolant (Regolog presentation rule)', () => {
	it('flags the coolant of a transfer the item travels with, ahead of its storage', () => {
		expect(hazardMark({ coolant: 'dry_ice' })).toBe('dry ice');
		expect(hazardMark({ coolant: 'dry_shipper', storagePlace: 'Nitrogen cabinet N2-1' })).toBe('LN₂ dry shipper');
		expect(hazardMark({ coolant: 'dry_ice', storagePlace: 'LN2 dewar D-2' })).toBe('dry ice');
		expect(hazardMark({ coolant: 'cold_packs' })).toBeNull();
		expect(hazardMark({ coolant: 'none', storagePlace: 'Cleanroom 2, cabinet C-4' })).toBeNull();
	});

	it('flags cryogenic and dry-ice storage, not a nitrogen-purged cabinet or a freezer', () => {
		expect(hazardMark({ storagePlace: 'LN2 dewar D-2, vapour phase' })).toBe('LN₂ cryogenic');
		expect(hazardMark({ storagePlace: 'Liquid-nitrogen store, rack 3' })).toBe('LN₂ cryogenic');
		expect(hazardMark({ storagePlace: 'Dry ice chest, bay 2' })).toBe('dry ice');
		expect(hazardMark({ storagePlace: 'Nitrogen cabinet N2-1, shelf 1' })).toBeNull();
		expect(hazardMark({ storagePlace: 'Freezer −20 °C, rack V' })).toBeNull();
		expect(hazardMark({ storagePlace: null })).toBeNull();
	});

	it('puts the hazard ahead of the handling words and marks it as a hazard', () => {
		expect(labelMark('N₂ only · no air', 'dry ice')).toEqual({ text: 'dry ice · N₂ only · no air', hazard: true });
		expect(labelMark(null, 'LN₂ cryogenic')).toEqual({ text: 'LN₂ cryogenic', hazard: true });
		expect(labelMark('no air', null)).toEqual({ text: 'no air' });
		expect(labelMark(null, null)).toBeNull();
	});
});
