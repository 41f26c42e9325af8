/**
 * Fuzz targets: one or more per parser, each a fast-check property over small inputs (no I/O per case
 * except the rule-file target, which writes to a tmpfs file). A property holds when the parser returns
 * (never throws), reports problems inside the input, and keeps its outputs inside its buffers.
 * Properties and their invariants are ours (common practice, no source); layouts come from the parsers'
 * own references (RFC 7011, RFC 3954, METHODS.md 1.x).
 */
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import fc from 'fast-check';
import { CaptureParser } from '../../src/capture/parser.js';
import { PcapngBuilder, buildPcap, frame } from '../../src/capture/testing.js';
import { Decoder } from '../../src/decode/decoder.js';
import { REASONS } from '../../src/decode/stats.js';
import type { FlowRecord } from '../../src/flow/record.js';
import { ingestIpfix, ingestNetflowV9 } from '../../src/flowlog/file-ingest.js';
import { IpfixDecoder } from '../../src/flowlog/ipfix.js';
import { NetflowV9Decoder } from '../../src/flowlog/netflow9.js';
import { rowToFlow } from '../../src/flowlog/row.js';
import { LIMITS, TemplateBudget } from '../../src/flowlog/session.js';
import { ingestCsv, ingestJsonl } from '../../src/flowlog/textlog.js';
import { ingestVpcFlowLog } from '../../src/flowlog/vpclog.js';
import { DEFAULT_VPC_FIELDS } from '../../src/ingest/sniff.js';
import { Wire, ipfixMessage, ipfixSet, memorySource, templateRecord } from '../../src/flowlog/testing.js';
import { DEFAULT_INGEST, type IngestOptions } from '../../src/ingest/types.js';
import { loadRules } from '../../src/rules/load.js';
import type { InputProblem } from '../../src/util/problem.js';
import { loadCorpus } from './corpus.js';
import { mutate } from './mutate.js';

export const PARSERS = ['pcap', 'pcapng', 'decode', 'ipfix', 'netflow9', 'csv', 'jsonl', 'vpc-flowlog', 'rules'] as const;
export type ParserName = (typeof PARSERS)[number];

export interface Target {
  parser: ParserName;
  name: string;
  /** Share of the parser's cases this target runs (the shares of one parser sum to 1). */
  share: number;
  property(): fc.IProperty<unknown> | fc.IAsyncProperty<unknown>;
}

class Broken extends Error {}
function check(ok: boolean, what: string): void {
  if (!ok) throw new Broken(what);
}

const caseSeed = fc.integer({ min: 1, max: 0x7fffffff });

// ---- captures ------------------------------------------------------------------------------------

/** Parses `file` whole and split at `cut`; both must agree and stay inside the input. */
function captureProperty(file: Uint8Array, cut: number): void {
  const results: number[][] = [];
  for (const split of [file.length, cut % (file.length + 1)]) {
    let packets = 0, captured = 0;
    const problems: InputProblem[] = [];
    const p = new CaptureParser('fuzz', (buf, off, capLen, _o, sec, ns) => {
      check(off >= 0 && off + capLen <= buf.length, 'packet view outside its buffer');
      check(Number.isInteger(sec) && ns >= 0 && ns < 1e9, 'timestamp out of range');
      packets++; captured += capLen;
    }, (x) => problems.push(x));
    if (split > 0) p.push(file.subarray(0, split));
    if (split < file.length) p.push(file.subarray(split));
    const s = p.end();
    for (const x of problems) check(x.offset >= 0 && x.offset <= file.length, `problem offset ${x.offset} outside 0..${file.length}`);
    check(s.packets === packets, 'summary packets differ from packets delivered');
    results.push([packets, captured, problems.length]);
  }
  check(results[0]!.join() === results[1]!.join(), `chunking changed the result: ${results[0]} vs ${results[1]}`);
}

const PCAP_MAGICS = [[0xd4, 0xc3, 0xb2, 0xa1], [0xa1, 0xb2, 0xc3, 0xd4], [0x4d, 0x3c, 0xb2, 0xa1], [0xa1, 0xb2, 0x3c, 0x4d]];

function builtPcaps(): Uint8Array[] {
  const pkts = [0, 1, 60, 300].map((n, i) => ({ sec: 1_700_000_000 + i, sub: i * 999, data: frame(n, i) }));
  return [buildPcap({ le: true }, pkts), buildPcap({ le: false, nano: true }, pkts), buildPcap({ le: true, linkType: 0x24000001 }, pkts)];
}

function builtPcapngs(): Uint8Array[] {
  const ng = (le: boolean) => new PcapngBuilder().shb({ le }).idb({ tsresol: 9, snaplen: 512 }).idb({ linkType: 101, tsoffset: 5n })
    .epb(0, 10n ** 18n, frame(60)).block(4, frame(24)).epb(1, 77n, frame(61)).isb(1, { ifdrop: 4n, osdrop: 1n })
    .pb(0, 1n, frame(30)).spb(frame(20)).bytes();
  return [ng(true), ng(false)];
}

function captureTargets(parser: 'pcap' | 'pcapng'): Target[] {
  return [
    {
      parser, name: 'golden-mutants', share: 0.7,
      property: () => {
        const c = loadCorpus();
        const seeds = [...(parser === 'pcap' ? c.pcap : c.pcapng), ...(parser === 'pcap' ? builtPcaps() : builtPcapngs())];
        return fc.property(fc.nat(seeds.length - 1), caseSeed, fc.nat(), (i, s, cut) => captureProperty(mutate(seeds[i]!, s), cut));
      },
    },
    {
      parser, name: 'random-after-magic', share: 0.3,
      property: () => {
        const magics = parser === 'pcap' ? PCAP_MAGICS : [[0x0a, 0x0d, 0x0d, 0x0a]];
        return fc.property(fc.nat(magics.length - 1), fc.uint8Array({ maxLength: 96 }), fc.nat(), (m, tail, cut) => {
          const file = new Uint8Array(4 + tail.length);
          file.set(magics[m]!); file.set(tail, 4);
          captureProperty(file, cut);
        });
      },
    },
  ];
}

// ---- packet decoders -----------------------------------------------------------------------------

/** Every decode either succeeds or counts exactly one skip reason. */
function decodeProperty(d: Decoder, b: Uint8Array, capLen: number, linkType: number): void {
  const before = d.stats.packets - d.stats.decoded;
  const skips = skipCount(d);
  d.decode(b, 0, capLen, linkType);
  check(skipCount(d) - skips === d.stats.packets - d.stats.decoded - before, `link type ${linkType}: a skip without its reason`);
}

const KEPT = new Set(['truncated-icmp-quote', 'unmatched-fragment', 'tiny-first-fragment']);
const SKIP_INDEXES = REASONS.map((r, i) => (KEPT.has(r) ? -1 : i)).filter((i) => i >= 0);
function skipCount(d: Decoder): number {
  const o = d.stats.toObject();
  let n = 0;
  for (const i of SKIP_INDEXES) n += o[REASONS[i]!] ?? 0;
  return n;
}

/** Link types the decoder reads (METHODS.md 1.3), with the golden frames of each as seeds. */
const LINKS: readonly [string, number][] = [
  ['ethernet', 1], ['raw-ip', 101], ['linux-sll', 113], ['linux-sll2', 276], ['bsd-null', 0], ['bsd-loop', 108],
];

function decodeTargets(): Target[] {
  const share = 0.8 / LINKS.length;
  const perLink = LINKS.map(([name, lt]): Target => ({
    parser: 'decode', name: `${name}-mutants`, share,
    property: () => {
      const frames = loadCorpus().frames.get(lt) ?? [];
      if (frames.length === 0) throw new Error(`no golden frames of link type ${lt}`);
      const d = new Decoder();
      return fc.property(fc.nat(frames.length - 1), caseSeed, fc.nat(), (i, s, cut) => {
        const b = mutate(frames[i]!, s);
        decodeProperty(d, b, cut % (b.length + 8), lt); // capLen past the buffer is clamped
      });
    },
  }));
  return [...perLink, {
    parser: 'decode', name: 'random-any-link', share: 0.2,
    property: () => {
      const d = new Decoder();
      const all = [...LINKS.map(([, lt]) => lt), 12, 14, 228, 229, 105, 0xffff];
      return fc.property(fc.uint8Array({ maxLength: 120 }), fc.constantFrom(...all), (b, lt) => decodeProperty(d, b, b.length, lt));
    },
  }];
}

// ---- flow exports --------------------------------------------------------------------------------

function checkRecord(r: FlowRecord): void {
  check(typeof r.src === 'string' && typeof r.dst === 'string', 'record without address text');
  check(r.bytes >= 0 && r.pkts >= 0 && r.rbytes >= 0 && r.rpkts >= 0, 'negative counter in a record');
}

function exportSessionChecks(templates: number, budget: TemplateBudget): void {
  check(templates <= LIMITS.templatesPerExporter, 'templates past the per-exporter cap');
  check(budget.used >= 0 && budget.used <= budget.max, 'template budget out of range');
}

/** Field specifiers: mapped IEs (RFC 7012) and random ones, fixed, odd and variable (65535) lengths. */
const IES = [1, 2, 4, 6, 7, 8, 10, 11, 12, 14, 27, 28, 32, 58, 136, 139, 150, 151, 152, 153, 160, 239];
const fieldSpec = fc.tuple(
  fc.oneof(fc.constantFrom(...IES), fc.integer({ min: 0, max: 0x7fff })),
  fc.oneof(fc.constantFrom(1, 2, 4, 8, 16, 65535), fc.integer({ min: 0, max: 40 })),
  fc.oneof({ weight: 4, arbitrary: fc.constant(0) }, { weight: 1, arbitrary: fc.constantFrom(29305, 9) }),
);
const setsArb = fc.array(fc.oneof(
  fc.record({ kind: fc.constant('template' as const), id: fc.integer({ min: 250, max: 262 }), fields: fc.array(fieldSpec, { maxLength: 8 }) }),
  fc.record({ kind: fc.constant('data' as const), id: fc.integer({ min: 250, max: 262 }), body: fc.uint8Array({ maxLength: 80 }) }),
  fc.record({ kind: fc.constant('withdraw' as const), id: fc.integer({ min: 0, max: 262 }), body: fc.uint8Array({ maxLength: 0 }) }),
), { maxLength: 6 });

/** One generated set: a template (field specifiers), a data set (raw records) or a withdrawal. */
interface FuzzSet { kind: 'template' | 'data' | 'withdraw'; id: number; fields?: readonly (readonly number[])[]; body?: Uint8Array }

function ipfixFromSets(sets: readonly FuzzSet[], seq: number): Uint8Array {
  const parts = sets.map((s) => {
    if (s.kind === 'template') return ipfixSet(2, templateRecord(s.id, s.fields ?? []));
    if (s.kind === 'withdraw') return ipfixSet(2, new Wire().u16(s.id).u16(0).bytes());
    return ipfixSet(s.id, s.body ?? new Uint8Array(0));
  });
  return ipfixMessage(1, seq, 1_700_000_000, ...parts);
}

function v9FromSets(sets: readonly FuzzSet[], seq: number): Uint8Array {
  const w = new Wire().u16(9).u16(sets.length).u32(123_456).u32(1_700_000_000).u32(seq).u32(7);
  for (const s of sets) {
    if (s.kind === 'template') {
      const f = s.fields ?? [];
      w.u16(0).u16(8 + f.length * 4).u16(s.id).u16(f.length);
      for (const [ie, len] of f) w.u16(ie! & 0xffff).u16(len!);
    } else if (s.kind === 'withdraw') {
      w.u16(1).u16(10).u16(s.id).u16(4).u16(0);
    } else {
      const body = s.body ?? new Uint8Array(0);
      w.u16(s.id).u16(4 + body.length).raw(body);
    }
  }
  return w.bytes();
}

function ipfixRun(messages: Uint8Array[]): void {
  const budget = new TemplateBudget();
  const dec = new IpfixDecoder('fuzz', 'fuzz', checkRecord, budget, (p) => check(p.offset >= -1, 'negative problem offset'));
  for (const b of messages) {
    let p = 0;
    while (p < b.length) {
      const used = dec.decodeMessage(b, p, b.length - p, p);
      check(used === 0 || (used >= 16 && used <= b.length - p), `message length ${used} outside its room`);
      p += used > 0 ? used : b.length;
    }
  }
  dec.finish();
  exportSessionChecks(dec.counters.templates - dec.counters.templatesWithdrawn, budget);
}

function v9Run(packets: Uint8Array[]): void {
  const budget = new TemplateBudget();
  const dec = new NetflowV9Decoder('fuzz', 'fuzz', checkRecord, budget, (p) => check(p.offset >= -1, 'negative problem offset'));
  for (const b of packets) dec.decodePacket(b, 0, b.length, 0);
  dec.finish();
  exportSessionChecks(dec.counters.templates - dec.counters.templatesWithdrawn, budget);
}

const quiet: IngestOptions = { ...DEFAULT_INGEST };

function exportTargets(parser: 'ipfix' | 'netflow9'): Target[] {
  const run = parser === 'ipfix' ? ipfixRun : v9Run;
  const build = parser === 'ipfix' ? ipfixFromSets : v9FromSets;
  const ingest = parser === 'ipfix' ? ingestIpfix : ingestNetflowV9;
  // the golden file cut into its messages or packets would need the parser itself; mutate the whole file
  return [
    {
      parser, name: 'golden-mutants', share: 0.45,
      property: () => {
        const seed = loadCorpus()[parser][0]!;
        return fc.property(caseSeed, (s) => run([mutate(seed, s)]));
      },
    },
    {
      parser, name: 'structured-sets', share: 0.5,
      property: () => fc.property(fc.array(setsArb, { minLength: 1, maxLength: 3 }), fc.nat(), (msgs, seq) =>
        run(msgs.map((sets, i) => build(sets, seq + i)))),
    },
    {
      parser, name: 'file-reader-resync', share: 0.05,
      property: () => {
        const seed = loadCorpus()[parser][0]!;
        return fc.asyncProperty(caseSeed, fc.integer({ min: 1, max: 700 }), async (s, chunk) => {
          const sum = await ingest(memorySource(mutate(seed, s), chunk), checkRecord, quiet);
          check(sum.flows >= 0 && sum.records >= 0, 'negative counts');
        });
      },
    },
  ];
}

// ---- text flow logs ------------------------------------------------------------------------------

const ROW_KEYS = ['src', 'dst', 'sport', 'dport', 'proto', 'start', 'end', 'bytes', 'pkts', 'rbytes', 'rpkts', 'flags', 'rflags',
  'outcome', 'exporter', 'vlan', 'icmpTypeCode', 'biflowDirection', 'other'];
const rowValue = fc.oneof(
  fc.constantFrom('192.0.2.1', '2001:db8::1', '::ffff:198.51.100.7', '256.1.1.1', 'tcp', 'udp', 'icmp', '6', '-1', '1e309', 'NaN',
    '2026-03-10T12:00:00Z', '2026-13-40T99:00:00Z', '1700000000', '1700000000000', '0x12', 'SA', 'established', ''),
  fc.string({ maxLength: 16 }), fc.integer(), fc.double(), fc.constant(null), fc.boolean(), fc.constant([1]), fc.constant({}),
);
const rowArb = fc.dictionary(fc.constantFrom(...ROW_KEYS), rowValue, { maxKeys: 12 });
const GOOD = { src: '192.0.2.1', dst: '198.51.100.2', sport: '40000', dport: '443', proto: 'tcp', start: '1700000000', end: '1700000001', bytes: '100', pkts: '2' };

function rowProperty(row: Record<string, unknown>): void {
  const r = rowToFlow(row, 'fuzz');
  if (typeof r === 'string') check(r.length > 0 && !r.includes('\n'), 'row error is not one line');
  else checkRecord(r);
}

const lineArb = fc.oneof(
  fc.string({ maxLength: 60 }),
  fc.constantFrom('"', '""', '\r', ',', ',,,,', '"a\nb"', '\u2028', '\ufeff', '{}', '[]', 'null', '{"src":"192.0.2.1"'),
  rowArb.map((r) => JSON.stringify(r)),
);

async function textProperty(kind: 'csv' | 'jsonl', lines: string[], chunk: number): Promise<void> {
  const head = kind === 'csv' ? `${Object.keys(GOOD).join(',')}\n` : '';
  const text = new TextEncoder().encode(head + lines.join('\n'));
  let bad = 0;
  const fn = kind === 'csv' ? ingestCsv : ingestJsonl;
  const s = await fn(memorySource(text, chunk), checkRecord, {
    ...DEFAULT_INGEST, onProblem: (p) => { bad++; check((p.line ?? 0) >= 1 || kind === 'csv', 'problem without a line'); },
  });
  check(s.flows + bad >= 0 && s.flows <= lines.length + 1, 'more flows than lines');
}

function textTargets(kind: 'csv' | 'jsonl'): Target[] {
  return [
    { parser: kind, name: 'rows', share: kind === 'csv' ? 0.99 : 0.9, property: () => fc.property(rowArb, rowProperty) },
    {
      // whole files cost 0.3 ms (JSON Lines) to 2.5 ms (CSV, a csv-parse stream each) per case
      parser: kind, name: 'files', share: kind === 'csv' ? 0.01 : 0.1,
      property: () => fc.asyncProperty(fc.array(lineArb, { maxLength: 6 }), fc.integer({ min: 1, max: 64 }), (l, c) => textProperty(kind, l, c)),
    },
  ];
}

/** A default-layout VPC flow-log record (AWS VPC User Guide, "Flow log record examples"), as words. */
const VPC_GOOD = '2 123456789010 eni-1235b8ca123456789 172.31.16.139 172.31.16.21 20641 22 6 20 4249 1418530010 1418530070 ACCEPT OK'.split(' ');
const VPC_WORDS = ['-', '', 'NODATA', 'SKIPDATA', 'REJECT', '2001:db8::1', '::ffff:1.2.3.4', '99999999999999999999', '-5', '1e999', '0x10', 'NaN'];

function vpcTargets(): Target[] {
  const word = fc.oneof(fc.string({ maxLength: 12 }), fc.constantFrom(...VPC_WORDS));
  const record = fc.oneof(
    fc.string({ maxLength: 80 }),
    fc.array(fc.tuple(fc.nat(VPC_GOOD.length - 1), word), { maxLength: 5 }).map((edits) => {
      const w = [...VPC_GOOD];
      for (const [i, x] of edits) w[i] = x;
      return w.join(' ');
    }),
  );
  // a header line of some fields in some order (srcaddr and dstaddr make it one), or none
  const header = fc.option(fc.shuffledSubarray([...DEFAULT_VPC_FIELDS, 'tcp-flags', 'pkt-srcaddr', 'pkt-dstaddr'])
    .map((f) => [...new Set(['srcaddr', 'dstaddr', ...f])].join(' ')));
  return [{
    parser: 'vpc-flowlog', name: 'files', share: 1,
    property: () => fc.asyncProperty(header, fc.array(record, { maxLength: 8 }), fc.integer({ min: 1, max: 64 }), async (h, lines, chunk) => {
      const text = new TextEncoder().encode([...(h === null ? [] : [h]), ...lines].join('\n'));
      let bad = 0;
      const s = await ingestVpcFlowLog(memorySource(text, chunk), checkRecord, {
        ...DEFAULT_INGEST, onProblem: (p) => { bad++; check((p.line ?? 0) >= 1, 'problem without a line'); },
      });
      check(s.flows + bad <= lines.length + 1, 'more flows and problems than lines');
    }),
  }];
}

// ---- rule files ----------------------------------------------------------------------------------

const YAML_BITS = ['rules:', '  - id: x', '    detector: volume-surge', '    enabled: false', 'inside: [10.0.0.0/8]', '&a', '*a', '!!js/function',
  '!tag', '<<: *a', '? ', '- ', ': ', '{', '}', '[', ']', '"', "'", '#', '\t', '%YAML 1.1', '---', '...', 'floors: {scanFailed: 1e999}',
  'severity: {medium: 2, high: 1}', 'maintenance:', '  - weekdays: [mon]', 'allow:', '  - cidr: 192.0.2.0/24'];

function rulesTargets(): Target[] {
  let dir = '';
  const file = () => {
    if (!dir) dir = mkdtempSync(join(process.platform === 'linux' ? '/dev/shm' : tmpdir(), 'tw-fuzz-rules-'));
    return join(dir, 'r.yaml');
  };
  process.once('exit', () => { if (dir) rmSync(dir, { recursive: true, force: true }); });
  const load = (text: string) => {
    const f = file();
    writeFileSync(f, text);
    // the YAML parser builds an Error per syntax problem: their stack traces were most of a case's cost
    const limit = Error.stackTraceLimit;
    Error.stackTraceLimit = 0;
    let r: ReturnType<typeof loadRules>;
    try { r = loadRules(f); } finally { Error.stackTraceLimit = limit; }
    // messages may quote file content (newlines included): the CLI escapes them when printing
    if ('errors' in r) for (const e of r.errors) check(/^[^:]+:\d+:\d+: ./.test(e), `rule error without file:line:column: ${e}`);
  };
  return [
    {
      // YAML parsing costs about 0.5 us per byte: cases are pieces of at most 6 lines of the rule files
      parser: 'rules', name: 'file-mutants', share: 0.6,
      property: () => {
        const seeds = loadCorpus().rules.flatMap((t) => {
          const lines = t.split('\n');
          const out: Uint8Array[] = [];
          for (let i = 0; i < lines.length; i += 3) out.push(new TextEncoder().encode(lines.slice(i, i + 6).join('\n')));
          return out;
        });
        return fc.property(fc.nat(seeds.length - 1), caseSeed, (i, s) => load(Buffer.from(mutate(seeds[i]!, s)).toString('latin1')));
      },
    },
    {
      parser: 'rules', name: 'yaml-pieces', share: 0.4,
      property: () => fc.property(fc.array(fc.oneof(fc.constantFrom(...YAML_BITS), fc.string({ maxLength: 12 })), { maxLength: 10 }), (bits) => load(bits.join('\n'))),
    },
  ];
}

export function allTargets(): Target[] {
  return [
    ...captureTargets('pcap'), ...captureTargets('pcapng'), ...decodeTargets(),
    ...exportTargets('ipfix'), ...exportTargets('netflow9'), ...textTargets('csv'), ...textTargets('jsonl'), ...vpcTargets(), ...rulesTargets(),
  ];
}

export function isBroken(e: unknown): boolean {
  return e instanceof Broken;
}
