/** The part of jstat (https://jstat.github.io) that Regolog uses; jstat ships no type declarations. It is CommonJS: import its default. */
declare module 'jstat' {
	interface JStat {
		studentt: { inv(p: number, dof: number): number; cdf(x: number, dof: number): number };
		normal: { inv(p: number, mean: number, sd: number): number; cdf(x: number, mean: number, sd: number): number };
		noncentralt: { cdf(x: number, dof: number, ncp: number): number };
	}
	const jstat: { jStat: JStat };
	export default jstat;
}
