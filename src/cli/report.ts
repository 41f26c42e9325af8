import { writeFile } from 'node:fs/promises';
import type { Command } from 'commander';
import type { Alert } from '../alert/alert.js';
import { collectReportData, latestEpisodes, readAlertsFile, renderReport, replayEpisodes, type EpisodeSpan, type Feed } from '../report/index.js';
import type { Sensor } from '../sensor/sensor.js';
import { formatProblem } from '../util/problem.js';
import { addReadThreadOption, addSensorOptions, applyLateness, parseSensorOptions, type RawSensorOptions } from './options.js';
import { runInputs } from './run-inputs.js';
import { openExisting } from './alerts.js';
import { Progress } from './progress.js';
import { inputError, usageError } from './exit.js';

interface ReportRaw extends RawSensorOptions { input: string[]; out: string; title?: string; state?: string }

/**
 * `tidewatch report [ALERTS] --input INPUT... --out FILE`: one self-contained HTML page (no scripts, no
 * external resources) with a summary, a timeline and, per alerted host, charts of the features that
 * tripped against their normal band, the explanations and the evidence. The series come from a
 * re-run over the input, so give the options of the run that made ALERTS. With `--state DB` the alerts
 * are the ones stored there (not those suppressed by a benign label); the re-run starts from nothing, so
 * give every input the state learned from, in order. Without either the input is read twice: once for
 * the alerts, once for the series.
 */
export function register(program: Command): void {
  const cmd = program
    .command('report')
    .description('write an HTML report (charts, timeline, explanations) of the alerts raised on the input')
    .argument('[alerts]', 'alert feed (JSON lines) of an earlier replay of the same input; default: replay it now')
    .option('--state <file>', 'take the alerts stored in this state file instead of an alerts file')
    .requiredOption('--input <files...>', 'the captures or flow exports the alerts came from (files)')
    .option('--out <file>', 'where to write the page', 'report.html')
    .option('--title <text>', 'page title');
  addReadThreadOption(addSensorOptions(cmd)).action(async (alertsFile: string | undefined, raw: ReportRaw) => {
    const parsed = parseSensorOptions(raw);
    if (!alertsFile && !raw.state && raw.input.includes('-')) throw usageError('--input -: without an alerts file the input is read twice, so it must be a file');
    if (alertsFile && raw.state) throw usageError('give an alerts file or --state, not both');
    let episodes: EpisodeSpan[] = [];
    if (raw.state) episodes = storedEpisodes(raw.state);
    else if (alertsFile) {
      const r = await readAlertsFile(alertsFile).catch((e: NodeJS.ErrnoException) => {
        throw inputError(`${alertsFile}: cannot read (${e.code ?? e.message})`);
      });
      if (!parsed.quiet) for (const p of r.problems.slice(0, 20)) process.stderr.write(`tidewatch: ${formatProblem(p)}\n`);
      episodes = r.episodes;
    }
    // the alerts' windows decide the window length unless --window was given
    let windowMs = parsed.sensor.windowMs;
    const windowS = episodes.find((e) => typeof e.alert.evidence.window_s === 'number')?.alert.evidence.window_s as number | undefined;
    if (windowS !== undefined && cmd.getOptionValueSource('window') === 'default') windowMs = windowS * 1000;
    const sensorOpts = { ...parsed.sensor, windowMs, latenessMs: parsed.latenessMs ?? 5_000 };
    const progress = new Progress({ quiet: parsed.quiet });
    const feed: Feed = async (sensor: Sensor) => {
      const { summaries, unreadable } = await runInputs(raw.input, sensor.record, {
        recordsTransient: true, windowMs, inputFormat: parsed.inputFormat, quiet: parsed.quiet, readThread: parsed.readThread, progress,
        onFormat: (f) => applyLateness(sensor, f, parsed.latenessMs),
      });
      if (unreadable.length === raw.input.length) throw inputError(`no readable input (${unreadable.join(', ')})`);
      return summaries;
    };
    if (!alertsFile && !raw.state) episodes = await replayEpisodes(sensorOpts, feed);
    const data = await collectReportData(episodes, {
      sensor: sensorOpts, generatedMs: Date.now(),
      title: raw.title ?? `Alerts on ${raw.input.map((f) => f.split('/').pop()).join(', ')}`,
    }, feed);
    const html = renderReport(data);
    await writeFile(raw.out, html).catch((e: NodeJS.ErrnoException) => {
      throw usageError(`--out ${raw.out}: cannot write (${e.code ?? e.message})`);
    });
    if (!parsed.quiet) {
      process.stderr.write(`wrote ${raw.out} (${Math.ceil(Buffer.byteLength(html) / 1024)} KiB): ${episodes.length} alerts on `
        + `${new Set(episodes.map((e) => e.alert.host)).size} hosts, ${data.series.length} charts\n`);
      for (const n of data.notes) process.stderr.write(`note: ${n}\n`);
    }
  });
}

/** The alerts stored in a state file (suppressed lines left out), latest line per episode. */
function storedEpisodes(path: string): EpisodeSpan[] {
  const store = openExisting(path);
  try {
    return latestEpisodes(store.alerts({}).map((r) => JSON.parse(r.json) as Alert));
  } finally {
    store.close();
  }
}
