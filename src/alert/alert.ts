import type { AlertKind, Evidence, Role } from '../detect/finding.js';

export const ALERT_SCHEMA = 'tidewatch.alert/1';
export type Severity = 'low' | 'medium' | 'high' | 'critical';
export type AlertState = 'open' | 'update' | 'closed';

/** The alert feed v1 object (DESIGN.md section 4). Key order here is the wire order. */
export interface Alert {
  schema: typeof ALERT_SCHEMA;
  id: string;
  kind: AlertKind;
  severity: Severity;
  host: string;
  role: Role;
  start: string;
  end: string;
  state: AlertState;
  feature: string;
  observed: number;
  expected: number;
  low: number;
  high: number;
  score: number;
  evidence: Evidence;
  rule: string;
  sensor: string;
}

export const ALERT_KEYS = [
  'schema', 'id', 'kind', 'severity', 'host', 'role', 'start', 'end', 'state', 'feature',
  'observed', 'expected', 'low', 'high', 'score', 'evidence', 'rule', 'sensor',
] as const satisfies readonly (keyof Alert)[];
