import { readFileSync } from 'node:fs';
import { defaultLateness } from '../../src/cli/options.js';
import { ingestInput } from '../../src/ingest/index.js';
import { DEFAULT_INGEST } from '../../src/ingest/types.js';
import { collectReportData, renderReport, replayEpisodes, type EpisodeSpan, type Feed, type ReportData } from '../../src/report/index.js';

/**
 * What `tidewatch report --input FILE --internal INSIDE` does without an alerts file, in-process: a
 * first replay for the alerts, a second for the series, then the page.
 */
export async function reportOf(file: string, truthFile: string, title: string): Promise<{ html: string; data: ReportData; episodes: EpisodeSpan[] }> {
  const inside = (JSON.parse(readFileSync(truthFile, 'utf8')) as { inside: string[] }).inside;
  const sensor = { windowMs: 60_000, latenessMs: 5_000, alpha: 0.001, internal: inside, sensor: 'test' };
  const feed: Feed = async (s) => [await ingestInput(file, s.record, { ...DEFAULT_INGEST, onFormat: (f) => s.setLateness(defaultLateness(f)) })];
  const episodes = await replayEpisodes(sensor, feed);
  const data = await collectReportData(episodes, { sensor, title, generatedMs: Date.UTC(2026, 2, 11) }, feed);
  return { html: renderReport(data), data, episodes };
}
