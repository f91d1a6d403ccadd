// The tamper-evident trail (DESIGN.md §3.9): appending (append.ts), verifying (verify.ts), signed
// checkpoints and their keys (checkpoints.ts, keys.ts) and bundles for offline verification
// (export.ts). The rules every verifier shares are in src/lib/domain/trail-verify.ts.
export * from './append';
export * from './verify';
export * from './checkpoints';
export * from './keys';
export * from './export';
export { canonicalParsed, canonicalRawRow, type RawRow } from '../../domain/trail-verify';
export * from './bundle-file';
