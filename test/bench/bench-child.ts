/**
 * One measured run in a fresh process, so peak RSS is the run's own: `flows FILE` (capture ingest:
 * reader, decoder, flow table, every record encoded as a JSON line as `tidewatch flows` does, the
 * chunks dropped) or `pcap-parser
 * FILE` (the npm pcap-parser's packet loop, counting packets only). Prints one JSON line.
 */
import { once } from 'node:events';
import type { EventEmitter } from 'node:events';
import { createRequire } from 'node:module';
import { JsonLineEncoder } from '../../src/flow/json-bytes.js';
import type { FlowRecord } from '../../src/flow/record.js';
import { ingestInput } from '../../src/ingest/index.js';
import { DEFAULT_INGEST } from '../../src/ingest/types.js';

const [mode, file] = process.argv.slice(2);

/** User + system CPU milliseconds since `c`: less sensitive than wall time to other work on the machine. */
function cpuSince(c: NodeJS.CpuUsage): number {
  const u = process.cpuUsage(c);
  return (u.user + u.system) / 1000;
}

async function flows(path: string) {
  // what `tidewatch flows` does per record, with the chunks dropped instead of written
  let chars = 0;
  const enc = new JsonLineEncoder();
  const sink = (r: FlowRecord) => {
    enc.write(r);
    if (enc.length >= 1 << 20) chars += enc.take().length;
  };
  const t = process.hrtime.bigint(), c = process.cpuUsage();
  const s = await ingestInput(path, sink, DEFAULT_INGEST);
  chars += enc.take().length;
  const ms = Number(process.hrtime.bigint() - t) / 1e6;
  const cpuMs = cpuSince(c);
  return { packets: s.packets, flows: s.flows, distinctFlows: s.counters.distinctFlows, outputChars: chars, problems: s.problemCounts, ms, cpuMs };
}

async function pcapParser(path: string) {
  const pcap = createRequire(import.meta.url)('pcap-parser') as { parse(input: string): EventEmitter };
  let packets = 0;
  const t = process.hrtime.bigint(), c = process.cpuUsage();
  const parser = pcap.parse(path);
  parser.on('packet', () => { packets++; });
  await once(parser, 'end');
  const ms = Number(process.hrtime.bigint() - t) / 1e6;
  return { packets, ms, cpuMs: cpuSince(c) };
}

const result = mode === 'flows' ? await flows(file!) : await pcapParser(file!);
process.stdout.write(JSON.stringify({ ...result, maxRssKB: process.resourceUsage().maxRSS }) + '\n');
