/**
 * One measured run in a fresh process, so peak RSS is the run's own: `flows FILE` (capture ingest:
 * reader, decoder, flow table, every record formatted as a JSON line into a null sink) or `pcap-parser
 * FILE` (the npm pcap-parser's packet loop, counting packets only). Prints one JSON line.
 */
import { once } from 'node:events';
import type { EventEmitter } from 'node:events';
import { createRequire } from 'node:module';
import { flowToJson } from '../../src/flow/format.js';
import type { FlowRecord } from '../../src/flow/record.js';
import { ingestInput } from '../../src/ingest/index.js';
import { DEFAULT_INGEST } from '../../src/ingest/types.js';

const [mode, file] = process.argv.slice(2);

async function flows(path: string) {
  let chars = 0;
  const sink = (r: FlowRecord) => { chars += flowToJson(r).length + 1; };
  const t = process.hrtime.bigint();
  const s = await ingestInput(path, sink, DEFAULT_INGEST);
  const ms = Number(process.hrtime.bigint() - t) / 1e6;
  return { packets: s.packets, flows: s.flows, distinctFlows: s.counters.distinctFlows, outputChars: chars, problems: s.problemCounts, ms };
}

async function pcapParser(path: string) {
  const pcap = createRequire(import.meta.url)('pcap-parser') as { parse(input: string): EventEmitter };
  let packets = 0;
  const t = process.hrtime.bigint();
  const parser = pcap.parse(path);
  parser.on('packet', () => { packets++; });
  await once(parser, 'end');
  const ms = Number(process.hrtime.bigint() - t) / 1e6;
  return { packets, ms };
}

const result = mode === 'flows' ? await flows(file!) : await pcapParser(file!);
process.stdout.write(JSON.stringify({ ...result, maxRssKB: process.resourceUsage().maxRSS }) + '\n');
