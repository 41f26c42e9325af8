import type { Severity } from '../alert/alert.js';
import { SEVERITY_LIMITS } from '../alert/severity.js';
import { ALERT_KINDS, type AlertKind, type Finding } from '../detect/finding.js';
import { DEFAULT_FLOORS, type Floors } from '../detect/thresholds.js';
import { CidrSet, type Cidr } from '../util/addr.js';
import type { Allowlist, AllowReason } from './allowlist.js';
import type { Weekly } from './weekly.js';

export interface SeverityLimits { medium: number; high: number; critical: number }

export type DropReason = AllowReason | 'maintenance';

/** Floors for the hosts of one CIDR. */
export interface SubnetFloors { cidr: Cidr; floors: Partial<Floors> }

/** What a rule says about its detector, already checked. */
export interface Rule {
  id: string;
  detector: AlertKind;
  enabled: boolean;
  floors: Partial<Floors>;
  subnets: SubnetFloors[];
  allow: Allowlist | null;
  maintenance: Weekly | null;
}

/** A checked rule set (compile.ts builds it; RuleSet.defaults() is the built-in one). */
export interface RuleSetParts {
  files: readonly string[];
  rules: readonly Rule[];
  severity: SeverityLimits | null;
  inside: readonly string[] | null;
  /** Apply to every detector. */
  allow: readonly Allowlist[];
  maintenance: readonly Weekly[];
}

const HOST_CACHE_LIMIT = 100_000;

/**
 * The rule set as detection uses it. Detectors without a rule run with the built-in floors under
 * their own name as rule id. Floors for a host: built-in defaults, then every rule's floors, then the
 * subnet overrides that contain the host, shortest prefix first (the most specific wins).
 */
export class RuleSet {
  readonly files: readonly string[];
  readonly rules: readonly Rule[];
  readonly severityLimits: SeverityLimits;
  readonly inside: string[] | null;
  readonly dropped: Record<DropReason, number> = { host: 0, pair: 0, port: 0, maintenance: 0 };
  private readonly byKind = new Map<AlertKind, Rule>();
  private readonly baseFloors: Floors;
  private readonly subnets: { set: CidrSet; floors: Partial<Floors> }[];
  private readonly hostFloors = new Map<string, Floors>();
  private readonly allow: readonly Allowlist[];
  private readonly maintenance: readonly Weekly[];

  constructor(parts: RuleSetParts) {
    this.files = parts.files;
    this.rules = parts.rules;
    this.severityLimits = parts.severity ?? { ...SEVERITY_LIMITS };
    this.inside = parts.inside ? [...parts.inside] : null;
    this.allow = parts.allow;
    this.maintenance = parts.maintenance;
    for (const r of parts.rules) this.byKind.set(r.detector, r);
    this.baseFloors = { ...DEFAULT_FLOORS };
    for (const r of parts.rules) Object.assign(this.baseFloors, r.floors);
    this.subnets = parts.rules.flatMap((r) => r.subnets)
      .sort((a, b) => a.cidr.bits - b.cidr.bits)
      .map((s) => ({ set: new CidrSet([s.cidr.text]), floors: s.floors }));
  }

  /** The built-in defaults: every detector on, DEFAULT_FLOORS, SEVERITY_LIMITS, no allowlists. */
  static defaults(): RuleSet {
    return new RuleSet({ files: [], rules: [], severity: null, inside: null, allow: [], maintenance: [] });
  }

  floorsFor(host: string): Floors {
    if (this.subnets.length === 0) return this.baseFloors;
    let f = this.hostFloors.get(host);
    if (f === undefined) {
      const matching = this.subnets.filter((s) => s.set.has(host));
      f = matching.length === 0 ? this.baseFloors : Object.assign({ ...this.baseFloors }, ...matching.map((s) => s.floors)) as Floors;
      if (this.hostFloors.size >= HOST_CACHE_LIMIT) this.hostFloors.clear();
      this.hostFloors.set(host, f);
    }
    return f;
  }

  enabled(kind: AlertKind): boolean {
    return this.byKind.get(kind)?.enabled ?? true;
  }

  enabledKinds(): AlertKind[] {
    return ALERT_KINDS.filter((k) => this.enabled(k));
  }

  /** The id of the rule behind a kind: the rule's id, else the kind itself. */
  ruleId(kind: AlertKind): string {
    return this.byKind.get(kind)?.id ?? kind;
  }

  /** A finding's `rule` as `<rule id>/<variant>` (detectors name it `<kind>/<variant>`). */
  ruleLabel(f: Finding): string {
    const id = this.ruleId(f.kind);
    return id === f.kind || !f.rule.startsWith(f.kind) ? f.rule : id + f.rule.slice(f.kind.length);
  }

  /** False when an allowlist or a maintenance window drops the finding (counted by reason). */
  allows(f: Finding): boolean {
    const rule = this.byKind.get(f.kind);
    const reason = allowReason(this.allow, f) ?? (rule?.allow ? rule.allow.match(f) : null);
    if (reason) { this.dropped[reason]++; return false; }
    if (this.maintenance.some((w) => w.covers(f.windowStart)) || rule?.maintenance?.covers(f.windowStart)) {
      this.dropped.maintenance++;
      return false;
    }
    return true;
  }

  globalAllowEntries(): number {
    return this.allow.reduce((n, a) => n + a.size, 0);
  }

  globalMaintenanceWindows(): number {
    return this.maintenance.length;
  }

  /** Severity of a score under this set's limits (alert/severity.ts has the built-in mapping). */
  severity(score: number): Severity {
    const l = this.severityLimits;
    if (!(score >= l.medium)) return 'low';
    if (score < l.high) return 'medium';
    if (score < l.critical) return 'high';
    return 'critical';
  }

  /** True when the severity limits are the built-in ones (alerts need no re-mapping). */
  hasDefaultSeverity(): boolean {
    const l = this.severityLimits;
    return l.medium === SEVERITY_LIMITS.medium && l.high === SEVERITY_LIMITS.high && l.critical === SEVERITY_LIMITS.critical;
  }
}

function allowReason(lists: readonly Allowlist[], f: Finding): AllowReason | null {
  for (const a of lists) {
    const r = a.match(f);
    if (r) return r;
  }
  return null;
}
