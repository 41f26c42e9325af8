import type { FlowSink } from '../flow/record.js';
import type { ByteSource } from '../ingest/source.js';
import { DEFAULT_VPC_FIELDS, isVpcHeader } from '../ingest/sniff.js';
import type { IngestOptions, IngestSummary } from '../ingest/types.js';
import { RecordSplitter, TextIngest, recordText, tooLongMessage } from './textlog.js';

/** VPC field name -> FlowRecord field (rowToFlow's keys); fields not listed are read for nothing. */
const FIELD_KEYS: Record<string, string> = {
  srcaddr: 'src', dstaddr: 'dst', srcport: 'sport', dstport: 'dport', protocol: 'proto',
  packets: 'pkts', bytes: 'bytes', start: 'start', end: 'end', 'tcp-flags': 'flags',
};

/**
 * A VPC flow log as FlowRecords. Each record counts one direction of a flow on one network interface
 * within an aggregation interval (so a connection usually shows as two records, one each way): it is
 * read as a one-way record, `start` and `end` in epoch seconds. `action` REJECT makes the outcome
 * `rejected` (and a TCP record of a layout without `tcp-flags` an attempt: SYN); otherwise the outcome
 * follows the one-way rules (docs/flow-inputs.md) on `tcp-flags` when the layout has it. `pkt-srcaddr` / `pkt-dstaddr`, when present and not `-`, name the packet's own
 * endpoints (traffic through a NAT gateway or a load balancer) and are taken over `srcaddr` / `dstaddr`.
 * NODATA and SKIPDATA records carry no flow: they are counted (`noDataRecords`, `skippedDataRecords`:
 * the interface's flows of that interval the provider could not record). Exporter label: the file's
 * label, then `/` and the `interface-id` when the layout has one.
 */
export async function ingestVpcFlowLog(src: ByteSource, sink: FlowSink, opts: IngestOptions): Promise<IngestSummary> {
  const t = new TextIngest(src.name, sink, opts);
  const counters = { noDataRecords: 0, skippedDataRecords: 0 };
  let fields: readonly string[] | null = null;
  let at: Record<string, number> = {};
  const layout = (names: readonly string[]) => {
    fields = names;
    at = {};
    names.forEach((n, i) => { at[n] ??= i; });
  };
  const split = new RecordSplitter(false, (b, s, e, line) => {
    const text = recordText(b, s, e, line).trim();
    if (text === '') return;
    if (fields === null) {
      if (isVpcHeader(text)) { layout(text.split(/\s+/)); return; }
      layout(DEFAULT_VPC_FIELDS);
    }
    const w = text.split(/\s+/);
    if (w.length !== fields!.length) {
      t.bad(line, 'bad-line', `${w.length} fields where the ${fields === DEFAULT_VPC_FIELDS ? 'default layout' : 'header'} has ${fields!.length}`);
      return;
    }
    const field = (name: string): string | undefined => {
      const i = at[name];
      const v = i === undefined ? undefined : w[i];
      return v === '-' ? undefined : v;
    };
    const status = field('log-status');
    if (status === 'NODATA') { counters.noDataRecords++; return; }
    if (status === 'SKIPDATA') { counters.skippedDataRecords++; return; }
    const row: Record<string, unknown> = {};
    for (const [name, key] of Object.entries(FIELD_KEYS)) {
      const v = field(name);
      if (v !== undefined) row[key] = v;
    }
    const pktSrc = field('pkt-srcaddr'), pktDst = field('pkt-dstaddr');
    if (pktSrc !== undefined) row['src'] = pktSrc;
    if (pktDst !== undefined) row['dst'] = pktDst;
    if (field('action') === 'REJECT') {
      row['outcome'] = 'rejected';
      // dropped by a security group or network ACL: without tcp-flags in the layout, a rejected TCP
      // record is taken as the connection attempt it almost always is (its first packets dropped)
      if (row['proto'] === '6' && at['tcp-flags'] === undefined) row['flags'] = 2;
    }
    const eni = field('interface-id');
    t.row(row, line, eni === undefined ? t.exporter : `${t.exporter}/${eni}`);
  }, (line) => t.bad(line, 'line-too-long', tooLongMessage));
  for (let c = await src.read(); c !== null; c = await src.read()) split.feed(c);
  split.end();
  return t.summary('vpc-flowlog', counters);
}
