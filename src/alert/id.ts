import { createHash } from 'node:crypto';
import type { AlertKind, Role } from '../detect/finding.js';

/**
 * Stable episode id: `tw1-` + the first 16 hex digits (64 bits) of
 * sha256("kind|host|role|startMs"), startMs being the episode's first window start in whole epoch ms.
 * Nothing else goes in, so re-runs over the same input and restarts with saved state agree.
 */
export function episodeId(kind: AlertKind, host: string, role: Role, startMs: number): string {
  const digest = createHash('sha256').update(`${kind}|${host}|${role}|${Math.floor(startMs)}`).digest('hex');
  return `tw1-${digest.slice(0, 16)}`;
}
