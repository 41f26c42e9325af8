/** Seeds for the fuzz targets: the committed golden files, and frames harvested from the captures. */
import { existsSync, readdirSync, readFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { CaptureParser } from '../../src/capture/parser.js';

/** The repository root (this file runs from test/fuzz/ under vitest and from dist/test/fuzz/ built). */
export function repoRoot(): string {
  let dir = dirname(fileURLToPath(import.meta.url));
  for (let i = 0; i < 6; i++) {
    if (existsSync(join(dir, 'package.json')) && existsSync(join(dir, 'test', 'golden'))) return dir;
    dir = dirname(dir);
  }
  throw new Error('repository root (package.json beside test/golden) not found');
}

function filesIn(dir: string, ext: RegExp): Uint8Array[] {
  return readdirSync(dir).filter((n) => ext.test(n)).sort().map((n) => new Uint8Array(readFileSync(join(dir, n))));
}

export interface Corpus {
  pcap: Uint8Array[];
  pcapng: Uint8Array[];
  ipfix: Uint8Array[];
  netflow9: Uint8Array[];
  /** Frames of the golden captures, by link type. */
  frames: Map<number, Uint8Array[]>;
  rules: string[];
}

let cached: Corpus | null = null;

export function loadCorpus(): Corpus {
  if (cached) return cached;
  const root = repoRoot();
  const g = join(root, 'test', 'golden');
  const caps = [join(g, 'captures'), join(g, 'reader')];
  const pcap = caps.flatMap((d) => filesIn(d, /\.pcap$/)).filter((b) => b.length > 24);
  const pcapng = caps.flatMap((d) => filesIn(d, /\.pcapng$/));
  const frames = new Map<number, Uint8Array[]>();
  for (const file of [...pcap, ...pcapng]) {
    const p = new CaptureParser('seed', (buf, off, capLen, _o, _s, _n, linkType) => {
      let list = frames.get(linkType);
      if (!list) { list = []; frames.set(linkType, list); }
      if (list.length < 64) list.push(buf.slice(off, off + capLen));
    });
    p.push(file);
    p.end();
  }
  const ruleDirs = [join(root, 'rules'), join(root, 'test', 'rules', 'good'), join(root, 'test', 'rules', 'bad')];
  const rules = ruleDirs.flatMap((d) => readdirSync(d).filter((n) => /\.(ya?ml|json)$/.test(n)).sort().map((n) => readFileSync(join(d, n), 'utf8')));
  cached = {
    pcap, pcapng, frames, rules,
    ipfix: [new Uint8Array(readFileSync(join(g, 'flowlog', 'ipfix_mixed.ipfix')))],
    netflow9: [new Uint8Array(readFileSync(join(g, 'flowlog', 'netflow9_mixed.nf9')))],
  };
  return cached;
}
