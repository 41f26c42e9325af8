export type { ReportData, ReportInput, FeatureSeries, EpisodeSpan } from './data.js';
export { readAlertsFile, parseAlerts, latestEpisodes } from './alerts-file.js';
export { collectReportData, replayEpisodes, type Feed, type CollectOptions } from './collect.js';
export { renderReport } from './html.js';
