/**
 * Transfers: custody moving between the facility and a lab, with packaging, shipping details and
 * signatures at both ends. One module per concern beside this one:
 * - transfer-input.ts — coolants and the checked input of preparing, signing and listing;
 * - transfer-rows.ts — reading a transfer, its items, its view and the list;
 * - manifest.ts — the canonical manifest every signature is bound to, and its SHA-256;
 * - transfer-prepare.ts — preparing an outbound shipment or a return;
 * - transfer-sign.ts — signing (custody moves only there) and cancelling.
 */
export { COOLANTS, MAX_DRY_ICE_KG, dryIceText, listTransfersQuery, prepareInput, signInput, type Coolant, type PrepareInput } from './transfer-input';
export { getTransfer, listTransfers, transferView, type TransferRow } from './transfer-rows';
export { manifestOf, sha256 } from './manifest';
export { prepareTransfer } from './transfer-prepare';
export { cancelTransfer, signTransfer, USAGE_REPORT_DAYS } from './transfer-sign';
