/**
 * Allocation requests, by concern: inputs (request-inputs.ts), the lifecycle from draft to decision
 * (request-lifecycle.ts), what a grant may give (request-budget.ts), aliquots set aside
 * (request-earmarks.ts) and reading requests (request-queries.ts). This module keeps the one import
 * path for all of them.
 */
export { constraintsInput, requestInput, grantInput, declineInput, earmarkInput, listRequestsQuery, type RequestInput } from './request-inputs';
export { createRequest, updateDraft, submitRequest, withdrawRequest, startReview, grantRequest, declineRequest } from './request-lifecycle';
export { grantableUg } from './request-budget';
export { earmarkItem, releaseEarmarks } from './request-earmarks';
export { requestView, loadRequest, listRequests, getRequest, type RequestView, type RequestRow } from './request-queries';
