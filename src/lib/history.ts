/** Kinds of entry in an item's audit history (client-safe; the server's history uses the same list). */
export const HISTORY_KINDS = ['lineage', 'custody', 'handling', 'weighing', 'blank'] as const;
export type HistoryKind = (typeof HISTORY_KINDS)[number];
