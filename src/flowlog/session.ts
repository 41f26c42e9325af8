import type { FlowSink } from '../flow/record.js';
import { ProblemCounter, type InputProblem } from '../util/problem.js';
import { AddressTexts } from './addr-cache.js';
import { DecodePlan } from './plan.js';
import { RecordScratch, decodeRecord } from './record-decode.js';
import { toFlowRecord, type TimeContext } from './to-flow.js';

/** Caps (ours, common practice, no source): bounded memory whatever an exporter sends. */
export const LIMITS = {
  templatesPerExporter: 4096,
  templatesTotal: 65_536,
  domainsPerExporter: 1024,
  /** Wire bytes of template definitions per session and in total (a template may have 16 k fields). */
  templateBytesPerExporter: 1 << 20,
  templateBytesTotal: 64 << 20,
  /** Data sets held per (session, domain) while their template has not arrived. */
  pendingSets: 64,
  pendingBytes: 1 << 20,
  /** Bytes of waiting data sets per session (over all its domains) and in total. */
  pendingBytesPerExporter: 2 << 20,
  pendingBytesTotal: 64 << 20,
} as const;

/** Templates and waiting data sets held across all sessions of one process (collector) or one input (file). */
export class TemplateBudget {
  used = 0;
  /** Definition bytes of the templates held, and bytes of data sets waiting for a template. */
  bytes = 0;
  pendingBytes = 0;
  constructor(
    readonly max: number = LIMITS.templatesTotal,
    readonly maxBytes: number = LIMITS.templateBytesTotal,
    readonly maxPendingBytes: number = LIMITS.pendingBytesTotal,
  ) {}
}

/** Counters one transport session (an exporter, a TCP connection or a file) keeps. */
export class SessionCounters {
  messages = 0;
  /** Data records decoded (flow and options records). */
  records = 0;
  flows = 0;
  optionsRecords = 0;
  /** Data records without source or destination address (not flows). */
  recordsWithoutAddress = 0;
  templates = 0;
  templatesRedefined = 0;
  templatesWithdrawn = 0;
  templatesOverCap = 0;
  /** Data sets that waited for their template and were decoded when it came. */
  setsDecodedLate = 0;
  /** Data sets dropped because their template never came (or the wait buffer was full). */
  unknownTemplateSets = 0;
  /** Of those, data sets dropped at once because the wait buffer was full (the pending-sets cap). */
  pendingOverCap = 0;
  /** Records lost by sequence numbers (IPFIX: data records; NetFlow v9: export packets). */
  sequenceLost = 0;
  sequenceResets = 0;
  /** The largest 1-in-N packet sampling an exporter announced (0: none); counts are never scaled by it. */
  samplingInterval = 0;
  bytes = 0;
  firstMs = NaN;
  lastMs = NaN;
  readonly problems = new ProblemCounter();

  toObject(): Record<string, number> {
    return {
      messages: this.messages, records: this.records, flows: this.flows, optionsRecords: this.optionsRecords,
      recordsWithoutAddress: this.recordsWithoutAddress, templates: this.templates,
      templatesRedefined: this.templatesRedefined, templatesWithdrawn: this.templatesWithdrawn,
      templatesOverCap: this.templatesOverCap, pendingOverCap: this.pendingOverCap, setsDecodedLate: this.setsDecodedLate,
      unknownTemplateSets: this.unknownTemplateSets, sequenceLost: this.sequenceLost,
      sequenceResets: this.sequenceResets, samplingInterval: this.samplingInterval,
    };
  }
}

interface PendingSet {
  templateId: number;
  /** Copy of the set's records (after the set header). */
  body: Uint8Array;
  inputOffset: number;
  exportMs: number;
  v9UptimeMs: number;
}

/** Template scope (RFC 7011 section 8): one Observation Domain (IPFIX) or Source ID (v9) of a session. */
export class Domain {
  readonly templates = new Map<number, DecodePlan>();
  pending: PendingSet[] = [];
  pendingBytes = 0;
  /** Next expected sequence number; -1 when unknown (first message, or records we could not count). */
  expectedSeq = -1;
  sysInitMs = NaN;
  constructor(readonly id: number, readonly exporter: string) {}
}

/** Why a template could not be installed, or 'ok'. */
type Install = 'ok' | 'over-cap';

/**
 * What IPFIX and NetFlow v9 share: the template cache of one transport session, the wait buffer for
 * data sets before their template, record decoding and problem reporting. The format modules parse
 * headers and template records and call in here.
 */
export class ExportSession {
  readonly counters = new SessionCounters();
  private readonly domains = new Map<number, Domain>();
  private templateCount = 0;
  private templateBytes = 0;
  private pendingBytes = 0;
  private readonly scratch = new RecordScratch();
  private readonly texts = new AddressTexts();
  private readonly ctx: TimeContext = { exportMs: 0, v9UptimeMs: -1, sysInitMs: NaN };

  /**
   * @param file    input name for problems (`-` for stdin, `ADDR:PORT` on the network)
   * @param label   exporter label before `/ODID` (file base name, or `ADDR:PORT`)
   */
  constructor(
    readonly file: string,
    readonly label: string,
    private readonly sink: FlowSink,
    private readonly budget: TemplateBudget,
    private readonly onProblem?: (p: InputProblem) => void,
  ) {}

  /** Counts `n` problems of one reason and reports them once. */
  problem(reason: string, offset: number, message: string, fatal = false, n = 1): void {
    this.counters.problems.add(reason, n);
    this.onProblem?.({ file: this.file, offset, reason, message, fatal });
  }

  /** The domain for `id`, created on first use; null (and reported) past the per-exporter cap. */
  domain(id: number, offset: number): Domain | null {
    let d = this.domains.get(id);
    if (d) return d;
    if (this.domains.size >= LIMITS.domainsPerExporter) {
      this.problem('domain-cap', offset, `more than ${LIMITS.domainsPerExporter} observation domains from one exporter; domain ${id} ignored`);
      return null;
    }
    d = new Domain(id, `${this.label}/${id}`);
    this.domains.set(id, d);
    return d;
  }

  /** Installs or redefines a template, then decodes data sets that were waiting for it. */
  install(d: Domain, plan: DecodePlan): Install {
    const old = d.templates.get(plan.templateId);
    const grow = plan.definition.length - (old ? old.definition.length : 0);
    if (grow > 0 && (this.templateBytes + grow > LIMITS.templateBytesPerExporter || this.budget.bytes + grow > this.budget.maxBytes)) {
      this.counters.templatesOverCap++;
      return 'over-cap';
    }
    if (old) {
      if (!old.sameDefinition(plan.definition)) this.counters.templatesRedefined++;
      d.templates.set(plan.templateId, plan);
    } else {
      if (this.templateCount >= LIMITS.templatesPerExporter || this.budget.used >= this.budget.max) {
        this.counters.templatesOverCap++;
        return 'over-cap';
      }
      d.templates.set(plan.templateId, plan);
      this.templateCount++;
      this.budget.used++;
      this.counters.templates++;
    }
    this.templateBytes += grow;
    this.budget.bytes += grow;
    if (d.pending.length > 0) this.drainPending(d, plan);
    return 'ok';
  }

  /** Withdraws one template (RFC 7011 section 8.1); false when it was not known. */
  withdraw(d: Domain, templateId: number): boolean {
    const plan = d.templates.get(templateId);
    if (!plan) return false;
    d.templates.delete(templateId);
    this.templateBytes -= plan.definition.length;
    this.budget.bytes -= plan.definition.length;
    this.templateCount--;
    this.budget.used--;
    this.counters.templatesWithdrawn++;
    return true;
  }

  /** Withdraws every template (options === false) or options template (true) of a domain. */
  withdrawAll(d: Domain, options: boolean): void {
    for (const [id, p] of d.templates) if (p.isOptions === options) this.withdraw(d, id);
  }

  /**
   * Decodes the records of one data set (`off`..`end`, after the set header). Returns the number of
   * data records decoded; stops at a record that overruns the set and reports it.
   */
  decodeSet(d: Domain, plan: DecodePlan, b: Uint8Array, off: number, end: number, exportMs: number, v9UptimeMs: number, inputOff: number): number {
    const s = this.scratch, ctx = this.ctx, c = this.counters;
    ctx.exportMs = exportMs;
    ctx.v9UptimeMs = v9UptimeMs;
    ctx.sysInitMs = d.sysInitMs;
    const min = plan.minLen;
    let p = off, n = 0;
    while (p + min <= end) {
      const next = decodeRecord(plan, b, p, end, s);
      if (next < 0) {
        this.problem('field-overrun', inputOff + (p - off), `a variable-length field of template ${plan.templateId} runs past its set; rest of the set skipped`);
        break;
      }
      p = next;
      n++;
      if (s.samplingInterval > c.samplingInterval) c.samplingInterval = s.samplingInterval;
      if (plan.isOptions) {
        c.optionsRecords++;
        if (s.sysInitMs === s.sysInitMs) ctx.sysInitMs = d.sysInitMs = s.sysInitMs;
        continue;
      }
      const rec = toFlowRecord(s, plan, ctx, b, this.texts, d.exporter);
      if (rec === null) { c.recordsWithoutAddress++; continue; }
      c.flows++;
      c.bytes += rec.bytes + rec.rbytes;
      if (!(rec.start >= c.firstMs)) c.firstMs = rec.start;
      if (!(rec.end <= c.lastMs)) c.lastMs = rec.end;
      this.sink(rec);
    }
    c.records += n;
    return n;
  }

  /** Keeps a data set whose template has not arrived yet (bounded); false when it was dropped. */
  hold(d: Domain, templateId: number, b: Uint8Array, off: number, end: number, exportMs: number, v9UptimeMs: number, inputOff: number): boolean {
    const len = end - off;
    if (d.pending.length >= LIMITS.pendingSets || d.pendingBytes + len > LIMITS.pendingBytes
      || this.pendingBytes + len > LIMITS.pendingBytesPerExporter || this.budget.pendingBytes + len > this.budget.maxPendingBytes) {
      this.counters.unknownTemplateSets++;
      this.counters.pendingOverCap++;
      this.problem('unknown-template', inputOff, `data set for unknown template ${templateId} dropped (wait buffer full)`);
      return false;
    }
    d.pending.push({ templateId, body: b.slice(off, end), inputOffset: inputOff, exportMs, v9UptimeMs });
    this.pendingChange(d, len);
    return true;
  }

  /** Keeps the domain's, the session's and the budget's pending byte counts together. */
  private pendingChange(d: Domain, delta: number): void {
    d.pendingBytes += delta;
    this.pendingBytes += delta;
    this.budget.pendingBytes += delta;
  }

  private drainPending(d: Domain, plan: DecodePlan): void {
    const keep: PendingSet[] = [];
    for (const ps of d.pending) {
      if (ps.templateId !== plan.templateId) { keep.push(ps); continue; }
      this.pendingChange(d, -ps.body.length);
      this.counters.setsDecodedLate++;
      this.decodeSet(d, plan, ps.body, 0, ps.body.length, ps.exportMs, ps.v9UptimeMs, ps.inputOffset);
    }
    d.pending = keep;
  }

  /** End of the session: data sets still waiting for a template are dropped and reported. */
  finish(): void {
    for (const d of this.domains.values()) {
      for (const ps of d.pending) {
        this.counters.unknownTemplateSets++;
        this.problem('unknown-template', ps.inputOffset, `data set for template ${ps.templateId} of domain ${d.id} never got its template; dropped`);
      }
      d.pending = [];
      this.pendingChange(d, -d.pendingBytes);
    }
  }

  /** Releases this session's templates from the shared budget (a closed TCP connection). */
  release(): void {
    this.budget.used -= this.templateCount;
    this.budget.bytes -= this.templateBytes;
    this.budget.pendingBytes -= this.pendingBytes;
    this.templateCount = 0;
    this.templateBytes = 0;
    this.pendingBytes = 0;
    this.domains.clear();
  }
}
