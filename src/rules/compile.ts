import { isScalar, type Node } from 'yaml';
import { ALERT_KINDS, type AlertKind } from '../detect/finding.js';
import type { Floors } from '../detect/thresholds.js';
import { CidrSet, parseCidr, type Cidr } from '../util/addr.js';
import { Allowlist, parsePeerPair, type PeerPair, type PortRange } from './allowlist.js';
import { describeNode, type Field, type FileCheck, type YNode } from './check.js';
import { FLOOR_SPECS, floorRangeProblem, floorsReadBy, type FloorName } from './floors.js';
import type { Rule, RuleSetParts, SeverityLimits } from './ruleset.js';
import type { RuleSource } from './source.js';
import { Weekly, WEEKDAYS, clockText, daySpans, isTimeZone, parseClock, parseWeekday, spansOverlap, type WeekSpan } from './weekly.js';

const TOP_KEYS = ['inside', 'severity', 'allow', 'maintenance', 'rules'] as const;
const RULE_KEYS = ['id', 'detector', 'enabled', 'description', 'floors', 'subnets', 'allow', 'maintenance'] as const;
const ALLOW_KEYS = ['hosts', 'ports', 'pairs'] as const;
const MAINTENANCE_KEYS = ['zone', 'weekly'] as const;
const RANGE_KEYS = ['days', 'from', 'to'] as const;
const SUBNET_KEYS = ['cidr', 'floors'] as const;
const SEVERITY_KEYS = ['medium', 'high', 'critical'] as const;
const RULE_ID = /^[A-Za-z0-9][A-Za-z0-9._-]{0,63}$/;

/**
 * Checks parsed rule files and builds the parts of a RuleSet. Every error is recorded with its
 * position; the result is null when there was any.
 */
export function compileSources(sources: readonly RuleSource[], errors: string[]): RuleSetParts | null {
  const before = errors.length;
  const c = new Compiler();
  for (const s of sources) c.file(s);
  if (errors.length > before) return null;
  return {
    files: sources.map((s) => s.check.file), rules: c.rules, severity: c.severity, inside: c.inside,
    allow: c.allow, maintenance: c.maintenance,
  };
}

class Compiler {
  rules: Rule[] = [];
  severity: SeverityLimits | null = null;
  inside: string[] | null = null;
  allow: Allowlist[] = [];
  maintenance: Weekly[] = [];
  private firstAt = new Map<string, string>();
  /** Floor values set so far (shared floors must agree), by `<cidr>|<name>` or `|<name>`. */
  private floorSet = new Map<string, { value: number; where: string }>();
  private fc!: FileCheck;

  file(s: RuleSource): void {
    this.fc = s.check;
    const root = s.doc.contents as YNode;
    if (root === null || root === undefined || (isScalar(root) && root.value === null)) return; // comments only
    const top = this.fc.map(root, 'a rule file', TOP_KEYS);
    if (!top) return;
    for (const [name, f] of top) {
      switch (name) {
        case 'inside': this.insideList(f); break;
        case 'severity': this.severityLimits(f); break;
        case 'allow': { const a = this.allowlist(f); if (a) this.allow.push(a); break; }
        case 'maintenance': { const w = this.weekly(f); if (w) this.maintenance.push(w); break; }
        case 'rules': for (const n of this.fc.list(f, 'rules') ?? []) this.rule(n); break;
      }
    }
  }

  /** Once per rule set: a second occurrence is an error naming the first. */
  private once(what: string, node: Node, duplicate = `${what} is already set at`): boolean {
    const prev = this.firstAt.get(what);
    if (prev) { this.fc.error(node, `${duplicate} ${prev}`); return false; }
    this.firstAt.set(what, this.fc.where(node));
    return true;
  }

  private insideList(f: Field): void {
    if (!this.once('inside', f.key)) return;
    const items = this.fc.list(f, 'inside');
    if (!items) return;
    if (items.length === 0) { this.fc.error(f.value, 'inside must list at least one CIDR'); return; }
    const out: string[] = [];
    for (const n of items) { const c = this.cidr(n, 'inside'); if (c) out.push(c.text); }
    if (out.length === items.length) this.inside = out;
  }

  private severityLimits(f: Field): void {
    if (!this.once('severity', f.key)) return;
    const m = this.fc.map(f.value, 'severity', SEVERITY_KEYS, f.key);
    if (!m) return;
    const limits: Partial<SeverityLimits> = {};
    for (const k of SEVERITY_KEYS) {
      const e = m.get(k);
      if (!e) { this.fc.error(f.value, `severity needs ${SEVERITY_KEYS.join(', ')}; ${k} is missing`, f.key); return; }
      const v = this.fc.num(e.value, `severity.${k}`, e.key);
      if (v === null) return;
      if (!(v > 0)) { this.fc.error(e.value, `severity.${k} must be a score > 0, got ${v}`, e.key); return; }
      limits[k] = v;
    }
    const l = limits as SeverityLimits;
    if (!(l.medium < l.high && l.high < l.critical)) {
      this.fc.error(f.value, `severity limits must rise: medium < high < critical, got ${l.medium}, ${l.high}, ${l.critical}`, f.key);
      return;
    }
    this.severity = l;
  }

  private rule(node: Node): void {
    const m = this.fc.map(node, 'a rule', RULE_KEYS);
    if (!m) return;
    const idF = m.get('id'), detF = m.get('detector');
    if (!idF || !detF) { this.fc.error(node, `a rule needs ${!idF ? 'an id' : 'a detector'}`); return; }
    const id = this.fc.str(idF.value, 'id', idF.key);
    const det = this.fc.str(detF.value, 'detector', detF.key);
    let ok = id !== null && det !== null;
    if (id !== null && !RULE_ID.test(id)) {
      this.fc.error(idF.value, `rule id '${id}' must be 1 to 64 letters, digits, '.', '_' or '-', starting with a letter or digit`);
      ok = false;
    } else if (id !== null && !this.once(`rule id '${id}'`, idF.value as Node, `duplicate rule id '${id}', first at`)) ok = false;
    let detector: AlertKind | null = null;
    if (det !== null) {
      if (!(ALERT_KINDS as readonly string[]).includes(det)) {
        this.fc.error(detF.value, `unknown detector '${det}' (expected ${ALERT_KINDS.join(', ')})`);
        ok = false;
      } else {
        detector = det as AlertKind;
        if (!this.once(`detector ${det}`, detF.value as Node, `detector ${det} already has a rule at`)) ok = false;
      }
    }
    const enabledF = m.get('enabled');
    const enabled = enabledF ? this.fc.bool(enabledF, 'enabled') : true;
    const descF = m.get('description');
    if (descF) this.fc.str(descF.value, 'description', descF.key);
    const floorsF = m.get('floors'), subnetsF = m.get('subnets'), allowF = m.get('allow'), maintF = m.get('maintenance');
    if (!detector) return; // floors depend on the detector: nothing more to check sensibly
    const floors = floorsF ? this.floors(floorsF, detector, '') : {};
    const subnets = subnetsF ? this.subnets(subnetsF, detector) : [];
    const allow = allowF ? this.allowlist(allowF) : null;
    const maintenance = maintF ? this.weekly(maintF) : null;
    if (!ok || enabled === null || !floors || !subnets || (allowF && !allow) || (maintF && !maintenance)) return;
    this.rules.push({ id: id!, detector, enabled, floors, subnets, allow, maintenance });
  }

  private floors(f: Field, detector: AlertKind, scope: string): Partial<Floors> | null {
    const readable = floorsReadBy(detector);
    if (readable.length === 0) return this.fc.error(f.key, `detector ${detector} reads no floors`);
    const m = this.fc.map(f.value, `floors of ${detector}`, Object.keys(FLOOR_SPECS), f.key);
    if (!m) return null;
    const out: Partial<Floors> = {};
    let ok = true;
    for (const [name, e] of m) {
      if (!readable.includes(name as FloorName)) {
        this.fc.error(e.key, `floor '${name}' is not read by ${detector} (it reads ${readable.join(', ')})`);
        ok = false;
        continue;
      }
      const v = this.fc.num(e.value, name, e.key);
      if (v === null) { ok = false; continue; }
      const problem = floorRangeProblem(name as FloorName, v);
      if (problem) { this.fc.error(e.value, problem); ok = false; continue; }
      if (!this.agree(scope, name as FloorName, v, e.value as Node)) { ok = false; continue; }
      out[name as FloorName] = v;
    }
    return ok ? out : null;
  }

  /** Floors read by two detectors (the scan floors) may be set in both rules, with one value. */
  private agree(scope: string, name: FloorName, value: number, node: Node): boolean {
    const key = `${scope}|${name}`;
    const prev = this.floorSet.get(key);
    if (prev && prev.value !== value) {
      const others = FLOOR_SPECS[name].readers.join(' and ');
      this.fc.error(node, `${name} is ${prev.value} at ${prev.where}; ${others} share it, so both must agree`);
      return false;
    }
    if (!prev) this.floorSet.set(key, { value, where: this.fc.where(node) });
    return true;
  }

  private subnets(f: Field, detector: AlertKind): Rule['subnets'] | null {
    const items = this.fc.list(f, 'subnets');
    if (!items) return null;
    const out: Rule['subnets'] = [];
    const seen = new Map<string, string>();
    let ok = true;
    for (const n of items) {
      const m = this.fc.map(n, 'a subnet override', SUBNET_KEYS);
      if (!m) { ok = false; continue; }
      const cf = m.get('cidr'), ff = m.get('floors');
      if (!cf || !ff) { this.fc.error(n, `a subnet override needs ${!cf ? 'a cidr' : 'floors'}`); ok = false; continue; }
      const cidr = this.cidr(cf.value, 'cidr', cf.key);
      if (!cidr) { ok = false; continue; }
      const key = cidr.text.toLowerCase();
      const prev = seen.get(key);
      if (prev) { this.fc.error(cf.value, `subnet ${cidr.text} is already overridden at ${prev}`); ok = false; continue; }
      seen.set(key, this.fc.where(cf.value));
      const floors = this.floors(ff, detector, key);
      if (!floors) { ok = false; continue; }
      out.push({ cidr, floors });
    }
    return ok ? out : null;
  }

  private allowlist(f: Field): Allowlist | null {
    const m = this.fc.map(f.value, 'allow', ALLOW_KEYS, f.key);
    if (!m) return null;
    const hosts = this.each(m.get('hosts'), 'hosts', (n) => this.cidr(n, 'hosts')?.text ?? null);
    const ports = this.each(m.get('ports'), 'ports', (n) => this.portRange(n));
    const pairs = this.each(m.get('pairs'), 'pairs', (n) => this.peerPair(n));
    if (!hosts || !ports || !pairs) return null;
    return new Allowlist(hosts.length ? new CidrSet(hosts) : null, ports, pairs);
  }

  /** Every item of an optional list through `read`; null when the list or any item was bad. */
  private each<T>(f: Field | undefined, what: string, read: (n: Node) => T | null): T[] | null {
    if (!f) return [];
    const items = this.fc.list(f, what);
    if (!items) return null;
    const out: T[] = [];
    for (const n of items) {
      const v = read(n);
      if (v !== null) out.push(v);
    }
    return out.length === items.length ? out : null;
  }

  private peerPair(n: Node): PeerPair | null {
    const s = this.fc.str(n, 'a peer pair');
    if (s === null) return null;
    return parsePeerPair(s, (t) => parseCidr(t) !== null)
      ?? this.fc.error(n, `peer pair malformed: '${s}' (expected 'ADDRESS -> ADDRESS' or 'ADDRESS <-> ADDRESS', CIDRs allowed)`);
  }

  private portRange(n: Node): PortRange | null {
    if (isScalar(n) && typeof n.value === 'number') {
      if (!Number.isInteger(n.value) || n.value < 0 || n.value > 65535) return this.fc.error(n, `port out of range: ${n.value} (expected 0 to 65535)`);
      return { lo: n.value, hi: n.value };
    }
    if (isScalar(n) && typeof n.value === 'string') {
      const m = /^(\d+)-(\d+)$/.exec(n.value.trim());
      if (!m) return this.fc.error(n, `port must be a number or a range LOW-HIGH, got '${n.value}'`);
      const lo = Number(m[1]), hi = Number(m[2]);
      if (lo > 65535 || hi > 65535) return this.fc.error(n, `port out of range: ${n.value} (expected 0 to 65535)`);
      if (lo > hi) return this.fc.error(n, `port range ${n.value} runs backwards`);
      return { lo, hi };
    }
    return this.fc.error(n, `port must be a number or a range LOW-HIGH, got ${describeNode(n)}`);
  }

  private weekly(f: Field): Weekly | null {
    const m = this.fc.map(f.value, 'maintenance', MAINTENANCE_KEYS, f.key);
    if (!m) return null;
    const zf = m.get('zone'), wf = m.get('weekly');
    if (!zf || !wf) return this.fc.error(f.value, `maintenance needs ${!zf ? 'a zone' : 'weekly ranges'}`, f.key);
    let ok = true;
    const zone = this.fc.str(zf.value, 'zone', zf.key);
    if (zone !== null && !isTimeZone(zone)) { this.fc.error(zf.value, `unknown time zone '${zone}' (expected an IANA name such as Europe/Berlin)`); ok = false; }
    const items = this.fc.list(wf, 'weekly');
    if (!items) return null;
    if (items.length === 0) return this.fc.error(wf.value, 'weekly must list at least one range');
    const spans: { span: WeekSpan; node: Node; text: string }[] = [];
    for (const n of items) {
      const r = this.range(n);
      if (!r) { ok = false; continue; }
      for (const span of r.spans) {
        const hit = spans.find((s) => spansOverlap(s.span, span));
        if (hit) { this.fc.error(n, `maintenance range ${r.text} overlaps ${hit.text} at ${this.fc.where(hit.node)}`); ok = false; break; }
      }
      for (const span of r.spans) spans.push({ span, node: n, text: r.text });
    }
    return ok && zone !== null ? new Weekly(zone, spans.map((s) => s.span)) : null;
  }

  private range(n: Node): { spans: WeekSpan[]; text: string } | null {
    const m = this.fc.map(n, 'a weekly range', RANGE_KEYS);
    if (!m) return null;
    const df = m.get('days'), ff = m.get('from'), tf = m.get('to');
    if (!df || !ff || !tf) return this.fc.error(n, 'a weekly range needs days, from and to');
    const dayNodes = isScalar(df.value) ? [df.value as Node] : this.fc.list(df, 'days');
    if (!dayNodes) return null;
    if (dayNodes.length === 0) return this.fc.error(df.value, 'days must list at least one weekday');
    const days: number[] = [];
    for (const d of dayNodes) {
      const s = this.fc.str(d, 'a weekday', df.key);
      if (s === null) return null;
      const i = parseWeekday(s);
      if (i === null) return this.fc.error(d, `bad weekday '${s}' (expected ${WEEKDAYS.join(', ')})`);
      if (days.includes(i)) return this.fc.error(d, `weekday '${s}' is listed twice`);
      days.push(i);
    }
    const from = this.clock(ff, 'from', false), to = this.clock(tf, 'to', true);
    if (from === null || to === null) return null;
    if (from === to) return this.fc.error(tf.value, `empty range: from and to are both ${clockText(from)}`);
    const text = `${dayNodes.map((d) => String((d as { value: unknown }).value)).join(',')} ${clockText(from)}-${clockText(to)}`;
    const spans: WeekSpan[] = [];
    for (const d of days) spans.push(...daySpans(d, from, to));
    return { spans, text };
  }

  private clock(f: Field, what: string, end: boolean): number | null {
    const s = this.fc.str(f.value, what, f.key);
    if (s === null) return null;
    const v = parseClock(s, end);
    if (v === null) return this.fc.error(f.value, `bad time '${s}' (expected HH:MM from 00:00 to ${end ? '24:00' : '23:59'})`);
    return v;
  }

  private cidr(n: YNode, what: string, fallback?: YNode): Cidr | null {
    const s = this.fc.str(n, what, fallback);
    if (s === null) return null;
    const c = parseCidr(s);
    return c ?? this.fc.error(n, `not a CIDR or address: '${s}'`);
  }
}
