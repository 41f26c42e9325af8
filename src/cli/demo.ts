import { mkdtempSync, readFileSync, existsSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import type { Command } from 'commander';
import { Sensor } from '../sensor/sensor.js';
import { generateScenario } from '../scenario/index.js';
import type { Alert } from '../alert/alert.js';
import { alertToJson } from '../alert/serialize.js';
import { checkTruth, parseAlertLines, scoreAlerts } from '../scenario/eval.js';
import type { Truth } from '../scenario/truth.js';
import { AlertOutput } from './alert-output.js';
import { renderTable } from './eval.js';
import { applyLateness } from './options.js';
import { describeInputs, runInputs } from './run-inputs.js';
import { inputError } from './exit.js';
import { rulesFromOption } from './rules.js';

const BUNDLED = fileURLToPath(new URL('../../../captures/larkspur-demo.pcap', import.meta.url));

interface DemoRaw { bundled?: boolean; seed: string; keep?: boolean; format?: string; color?: boolean; rules?: string }

/**
 * `tidewatch demo`: generates the Larkspur incident scenario (6 hours, about 2 M packets) into a
 * temporary folder, replays it, and scores the alerts against the scenario's truth. `--bundled`
 * replays the small capture shipped in captures/ instead (what `npm run demo` does).
 */
export function register(program: Command): void {
  program
    .command('demo')
    .description('generate the demo scenario, replay it and score the alerts against its truth')
    .option('--bundled', 'replay the bundled captures/larkspur-demo.pcap instead of generating')
    .option('--seed <n>', 'scenario seed', '1')
    .option('--keep', 'keep the generated folder')
    .option('--format <fmt>', 'jsonl or pretty (default: pretty on a terminal, jsonl otherwise)')
    .option('--no-color', 'no colour in pretty output')
    .option('--rules <path>', 'rule file or folder (default: the shipped rules/); the inside networks come from the truth')
    .action(async (raw: DemoRaw) => {
      const rules = rulesFromOption(raw.rules);
      let dataFile: string;
      let truthFile: string;
      let dir: string | null = null;
      if (raw.bundled) {
        dataFile = BUNDLED;
        truthFile = BUNDLED.replace(/\.pcap$/, '.truth.json');
        if (!existsSync(dataFile)) throw inputError(`${dataFile}: bundled demo capture missing`);
      } else {
        dir = mkdtempSync(join(tmpdir(), 'tidewatch-demo-'));
        process.stderr.write(`generating the Larkspur incident scenario (seed ${raw.seed}) in ${dir} ...\n`);
        ({ dataFile, truthFile } = await generateScenario({ kind: 'incident', seed: Number(raw.seed), outDir: dir }));
      }
      const truth = JSON.parse(readFileSync(truthFile, 'utf8')) as Truth;
      const bad = checkTruth(truth);
      if (bad) throw inputError(`${truthFile}: ${bad}`);
      const lines: string[] = [];
      const output = new AlertOutput({ format: raw.format, color: raw.color });
      const emit = (a: Alert) => { lines.push(alertToJson(a)); output.emit(a); };
      const sensor = new Sensor({
        windowMs: 60_000, latenessMs: 5_000, alpha: 0.001, internal: truth.inside, sensor: 'larkspur-demo', mode: 'replay', rules,
      }, emit);
      process.stderr.write(`replaying ${dataFile} (inside networks ${truth.inside.join(', ')})\n`);
      const { summaries } = await runInputs([dataFile], sensor.record, {
        recordsTransient: true, windowMs: 60_000, quiet: false, onFormat: (f) => applyLateness(sensor, f),
      });
      sensor.finish();
      await output.close();
      for (const l of describeInputs(summaries)) process.stderr.write(`${l}\n`);
      const { alerts } = parseAlertLines(lines.join('\n'), 'demo');
      process.stderr.write(`\nscored against ${truthFile}:\n${renderTable(scoreAlerts(truth, alerts))}`);
      if (dir && !raw.keep) rmSync(dir, { recursive: true, force: true });
      else if (dir) process.stderr.write(`kept ${dir}\n`);
    });
}
