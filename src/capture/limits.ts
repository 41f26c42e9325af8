/** Sanity caps shared by both formats (METHODS.md 1.1: "a sanity cap, e.g. 256 KiB" [P]). */

/** Largest captured length accepted in a packet record. */
export const MAX_CAPTURED = 256 * 1024;

/**
 * Largest pcapng block the reader buffers to parse (packet blocks with options, IDB, ISB). Blocks it only
 * skips (NRB, DSB, custom, unknown) may be any size: they are streamed past, never buffered.
 */
export const MAX_PARSED_BLOCK = 1024 * 1024;

/** Interfaces kept per pcapng section; more IDBs are reported and ignored so memory stays bounded. */
export const MAX_INTERFACES = 4096;

/** InputProblem objects kept in a summary; all problems are counted. */
export const MAX_KEPT_PROBLEMS = 100;
