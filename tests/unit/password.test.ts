import { describe, it, expect } from 'vitest';
import { passwordProblem, PASSWORD_MIN } from '../../src/lib/server/auth/password';

// Rules after NIST SP 800-63B §5.1.1.2 (memorized secrets): minimum length, at least 64
// characters allowed, no composition rules, refusal of commonly used values.
describe('password rules', () => {
	it('refuses fewer than 12 characters and accepts 12', () => {
		expect(PASSWORD_MIN).toBe(12);
		expect(passwordProblem('abcdefghijk')).toMatch(/at least 12/);
		expect(passwordProblem('glacier moth')).toBeNull();
	});

	it('accepts 64 and more characters, spaces and any script, with no composition rules', () => {
		expect(passwordProblem('a'.repeat(63) + 'b')).toBeNull();
		expect(passwordProblem('only lowercase words here')).toBeNull();
		expect(passwordProblem('Ωμέγα κρύσταλλος πέτρα')).toBeNull();
		expect(passwordProblem('x'.repeat(129))).toMatch(/at most/);
	});

	it('counts characters, not UTF-16 units', () => {
		// 11 emoji are 22 UTF-16 units but only 11 characters.
		expect(passwordProblem('🪨'.repeat(11))).toMatch(/at least 12/);
	});

	it('refuses passwords on the shipped common-password list, in any letter case', () => {
		expect(passwordProblem('1q2w3e4r5t6y')).toMatch(/commonly used/);
		expect(passwordProblem('QWERTY123456')).toMatch(/commonly used/);
	});

	it('refuses the service name and the user’s own e-mail or name', () => {
		expect(passwordProblem('brightwater!!')).toMatch(/too easy/);
		expect(passwordProblem('lena.fennick.ortiz', ['Lena Fennick Ortiz'])).toMatch(/too easy/);
		expect(passwordProblem('aaaaaaaaaaaaaa')).toMatch(/repeated/);
	});
});
