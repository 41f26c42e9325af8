/**
 * `npm run fuzz`: every parser's fuzz targets (test/fuzz/targets.ts), 1 M cases per parser by default,
 * split over its targets by their shares. Prints the seed first so any failure reproduces:
 *
 *   node dist/test/fuzz/run.js [--seed N] [--parser NAME] [--target NAME] [--cases N]
 *
 * Exit 0 when every property held, 1 on a failure (with its seed, path and counterexample), 2 on usage.
 */
import fc from 'fast-check';
import { PARSERS, allTargets, type ParserName, type Target } from './targets.js';

interface Args { seed: number; parser: ParserName | null; target: string | null; cases: number }

function parseArgs(argv: string[]): Args {
  const a: Args = { seed: (Date.now() ^ (process.pid << 16)) >>> 1, parser: null, target: null, cases: 1_000_000 };
  for (let i = 0; i < argv.length; i++) {
    const k = argv[i]!, v = argv[i + 1];
    const need = (): string => { if (v === undefined) usage(`${k} needs a value`); i++; return v!; };
    if (k === '--seed') a.seed = intArg(k, need());
    else if (k === '--cases') a.cases = intArg(k, need());
    else if (k === '--target') a.target = need();
    else if (k === '--parser') {
      const p = need();
      if (!(PARSERS as readonly string[]).includes(p)) usage(`--parser: one of ${PARSERS.join(', ')}`);
      a.parser = p as ParserName;
    } else usage(`unknown argument ${k}`);
  }
  return a;
}

function intArg(k: string, v: string): number {
  const n = Number(v);
  if (!Number.isSafeInteger(n) || n < 0) usage(`${k}: expected a non-negative integer, got ${v}`);
  return n;
}

function usage(msg: string): never {
  process.stderr.write(`fuzz: ${msg}\nusage: node dist/test/fuzz/run.js [--seed N] [--parser ${PARSERS.join('|')}] [--target NAME] [--cases N]\n`);
  process.exit(2);
}

/** Cases of one target: its share of the parser's total, rounded up so the parser gets at least its total. */
function casesFor(t: Target, perParser: number): number {
  return Math.max(1, Math.ceil(perParser * t.share));
}

async function main(): Promise<void> {
  const args = parseArgs(process.argv.slice(2));
  const targets = allTargets().filter((t) => (args.parser === null || t.parser === args.parser) && (args.target === null || t.name === args.target));
  if (targets.length === 0) usage('no target matches');
  process.stdout.write(`fuzz: seed ${args.seed}, ${args.cases} cases per parser\n`);
  const perParser = new Map<string, number>();
  const started = Date.now();
  let failed = 0;
  for (const t of targets) {
    const numRuns = casesFor(t, args.cases);
    const t0 = Date.now();
    // each target gets its own fast-check seed derived from the run's, so --target alone reproduces it
    const seed = (args.seed + hash(`${t.parser}/${t.name}`)) | 0;
    const details = await fc.check(t.property() as fc.IAsyncProperty<unknown>, { numRuns, seed, endOnFailure: true });
    const ms = Date.now() - t0;
    const label = `${t.parser}/${t.name}`.padEnd(28);
    if (details.failed) {
      failed++;
      process.stdout.write(`${label} FAILED after ${details.numRuns} cases (${ms} ms)\n`
        + `  reproduce: node dist/test/fuzz/run.js --seed ${args.seed} --parser ${t.parser} --target ${t.name} --cases ${args.cases}\n`
        + `  fast-check seed ${details.seed} path ${details.counterexamplePath}\n`
        + `  counterexample: ${fc.stringify(details.counterexample)}\n`
        + `  error: ${String(details.errorInstance instanceof Error ? details.errorInstance.stack : details.errorInstance).split('\n').slice(0, 6).join('\n  ')}\n`);
    } else {
      process.stdout.write(`${label} ${String(details.numRuns).padStart(9)} cases ${String(ms).padStart(7)} ms\n`);
    }
    perParser.set(t.parser, (perParser.get(t.parser) ?? 0) + details.numRuns);
  }
  process.stdout.write(`totals: ${[...perParser].map(([p, n]) => `${p} ${n}`).join(', ')}; ${((Date.now() - started) / 1000).toFixed(1)} s\n`);
  if (failed > 0) {
    process.stdout.write(`fuzz: ${failed} target(s) FAILED (seed ${args.seed})\n`);
    process.exitCode = 1;
  } else process.stdout.write('fuzz: no failure\n');
}

function hash(s: string): number {
  let h = 0x811c9dc5;
  for (let i = 0; i < s.length; i++) h = Math.imul(h ^ s.charCodeAt(i), 0x01000193);
  return h >>> 0;
}

void main();
