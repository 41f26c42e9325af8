import type { Alert, Severity } from '../alert/alert.js';
import { explain, fmtBytes } from '../alert/explain.js';
import { ALERT_KINDS } from '../detect/finding.js';
import { latestEpisodes } from './alerts-file.js';
import type { EpisodeSpan, FeatureSeries, ReportData } from './data.js';
import { fmtCount, fmtDuration, fmtUtc, valueFormatter } from './format.js';
import { STYLE } from './style.js';
import { featureChart } from './svg/feature-chart.js';
import { episodeHatchDef, kindPatternDefs } from './svg/palette.js';
import { timelineChart } from './svg/timeline.js';
import { esc } from './svg/svg.js';

const SEVERITIES: readonly Severity[] = ['critical', 'high', 'medium', 'low'];

/** Nothing may be fetched: styles inline, no scripts, images only as data. */
const CSP = "default-src 'none'; style-src 'unsafe-inline'; img-src data:";

interface HostSection { host: string; anchor: string; episodes: EpisodeSpan[]; series: FeatureSeries[] }

/**
 * The report as one self-contained HTML page: summary, timeline of episodes, and a section per alerted
 * host with its charts, explanations and evidence. No scripts, no external resources.
 */
export function renderReport(d: ReportData): string {
  const episodes = latestEpisodes(d.alerts);
  const hosts = hostSections(episodes, d.series);
  const body = [
    `<header><h1>${esc(d.title)}</h1><p class="sub">tidewatch report, made ${esc(fmtUtc(d.generatedMs))}. `
      + 'Alerts are advisory: review each one before acting on it.</p></header>',
    summary(d, episodes),
    ...d.notes.map((n) => `<p class="note">${esc(n)}</p>`),
    hosts.length > 0
      ? `<section id="timeline"><h2>Timeline</h2>${timelineChart(hosts, Math.floor(d.spanStartMs / d.windowMs) * d.windowMs, d.spanEndMs)}</section>`
        + `<nav><h2>Alerted hosts</h2><ul>${hosts.map((h) => `<li><a href="#${h.anchor}">${esc(h.host)}</a> (${h.episodes.length})</li>`).join('')}</ul></nav>`
      : '<p>No alerts were raised.</p>',
    ...hosts.map(hostSection),
    '<footer>Captures and flow records hold personal data: keep and share this report under the law and policy '
      + 'that apply to you. Charts: observed value per window against the expected value and normal band learned for the host; '
      + 'hatched spans are alert episodes.</footer>',
  ];
  return '<!DOCTYPE html>\n<html lang="en"><head><meta charset="utf-8">'
    + `<meta http-equiv="Content-Security-Policy" content="${CSP}">`
    + '<meta name="viewport" content="width=device-width, initial-scale=1">'
    + `<title>${esc(d.title)}</title><style>${STYLE}</style></head><body>`
    + `<svg width="0" height="0" style="position:absolute" aria-hidden="true"><defs>${kindPatternDefs()}${episodeHatchDef()}</defs></svg>`
    + `${body.join('\n')}</body></html>\n`;
}

function summary(d: ReportData, episodes: readonly EpisodeSpan[]): string {
  const inputs = d.inputs.map((i) => `<li><span class="mono">${esc(i.file)}</span> (${esc(i.format)}): `
    + `${fmtCount(i.units)} ${i.unitName}, ${fmtCount(i.flows)} flows</li>`).join('');
  const facts: [string, string][] = [
    ['Time span', `${esc(fmtUtc(d.spanStartMs))} to ${esc(fmtUtc(d.spanEndMs))} (${fmtDuration(d.spanEndMs - d.spanStartMs)}), windows of ${fmtDuration(d.windowMs)}`],
    ['Inputs', `<ul style="margin:0;padding-left:18px">${inputs}</ul>`],
    ['Hosts', `${fmtCount(d.insideHosts)} inside and ${fmtCount(d.activeHosts - d.insideHosts)} outside hosts active; ${fmtCount(d.addresses)} addresses seen`],
    ['Flows', fmtCount(d.flows)],
    ['Alerts', `${episodes.length} episodes on ${new Set(episodes.map((e) => e.alert.host)).size} hosts`],
  ];
  const kinds = ALERT_KINDS.filter((k) => episodes.some((e) => e.alert.kind === k));
  const cell = (k: string, s: Severity) => episodes.filter((e) => e.alert.kind === k && e.alert.severity === s).length;
  const table = kinds.length === 0 ? '' : '<table class="by-kind"><thead><tr><th>kind</th>'
    + SEVERITIES.map((s) => `<th class="n">${s}</th>`).join('') + '<th class="n">total</th></tr></thead><tbody>'
    + kinds.map((k) => `<tr><td>${k}</td>${SEVERITIES.map((s) => `<td class="n">${cell(k, s) || ''}</td>`).join('')}`
      + `<td class="n">${episodes.filter((e) => e.alert.kind === k).length}</td></tr>`).join('')
    + '</tbody></table>';
  return `<section id="summary"><h2>Summary</h2><dl class="facts">${facts.map(([k, v]) => `<dt>${k}</dt><dd>${v}</dd>`).join('')}</dl>${table}</section>`;
}

/** Hosts in order of their first episode, each with its episodes and charts. */
function hostSections(episodes: readonly EpisodeSpan[], series: readonly FeatureSeries[]): HostSection[] {
  const byHost = new Map<string, HostSection>();
  const used = new Set<string>();
  for (const e of episodes) {
    let h = byHost.get(e.alert.host);
    if (!h) {
      h = { host: e.alert.host, anchor: uniqueAnchor(e.alert.host, used), episodes: [], series: [] };
      byHost.set(e.alert.host, h);
    }
    h.episodes.push(e);
  }
  for (const s of series) byHost.get(s.host)?.series.push(s);
  for (const h of byHost.values()) h.series.sort((a, b) => a.feature.localeCompare(b.feature) || a.startMs - b.startMs);
  return [...byHost.values()];
}

function uniqueAnchor(host: string, used: Set<string>): string {
  const base = `host-${host.toLowerCase().replace(/[^0-9a-z]+/g, '-')}`;
  let a = base;
  for (let i = 2; used.has(a); i++) a = `${base}-${i}`;
  used.add(a);
  return a;
}

function hostSection(h: HostSection): string {
  const charts = h.series.map((s, i) => {
    const t1 = s.startMs + s.observed.length * s.stepMs;
    const eps = h.episodes.filter((e) => e.alert.feature === s.feature && e.endMs > s.startMs && e.startMs < t1);
    const kinds = [...new Set(eps.map((e) => e.alert.kind))].join(', ');
    return `<figure class="feature" data-feature="${esc(s.feature)}">${featureChart(s, eps, `${h.anchor}-chart-${i}`)}`
      + `<figcaption>${esc(s.feature)} of ${esc(h.host)} per ${fmtDuration(s.stepMs / s.pointWindows)} window, ${esc(fmtUtc(s.startMs))} to ${esc(fmtUtc(t1))}`
      + `${kinds ? `; tripped ${esc(kinds)}` : ''}.</figcaption></figure>`;
  }).join('');
  return `<section class="host" id="${h.anchor}"><h2>${esc(h.host)}</h2>${charts}${h.episodes.map((e) => alertBlock(e.alert)).join('')}</section>`;
}

function alertBlock(a: Alert): string {
  const fmt = valueFormatter(a.feature);
  const facts: [string, string][] = [
    ['When', `${esc(fmtUtc(Date.parse(a.start)))} to ${esc(fmtUtc(Date.parse(a.end)))} (${fmtDuration(Date.parse(a.end) - Date.parse(a.start))}), ${esc(a.state)}`],
    ['Role', esc(a.role)],
    ['Feature', `<span class="mono">${esc(a.feature)}</span>: observed ${esc(fmt(a.observed))}, expected ${esc(fmt(a.expected))}, `
      + `normal ${esc(fmt(Math.max(0, a.low)))} to ${esc(fmt(Math.max(0, a.high)))}`],
    ['Score', `${a.score} (robust standard deviations above expected)`],
    ['Rule', `<span class="mono">${esc(a.rule)}</span>, id <span class="mono">${esc(a.id)}</span>`],
  ];
  const e = a.evidence;
  const peers = e.top_peers.length === 0 ? '' : `<table class="peers"><thead><tr><th>top peers</th><th class="n">count</th></tr></thead><tbody>`
    + e.top_peers.map((p) => `<tr><td class="mono">${esc(p.peer)}</td><td class="n">${fmtCount(p.count)}</td></tr>`).join('') + '</tbody></table>';
  const ports = e.top_ports.length === 0 ? '' : `<table class="ports"><thead><tr><th>top ports</th><th class="n">count</th></tr></thead><tbody>`
    + e.top_ports.map((p) => `<tr><td class="mono">${p.port}</td><td class="n">${fmtCount(p.count)}</td></tr>`).join('') + '</tbody></table>';
  const totals = `<table class="totals"><thead><tr><th>episode totals</th><th class="n"></th></tr></thead><tbody>`
    + `<tr><td>flows</td><td class="n">${fmtCount(e.flows)}</td></tr><tr><td>packets</td><td class="n">${fmtCount(e.packets)}</td></tr>`
    + `<tr><td>bytes</td><td class="n">${fmtBytes(e.bytes)}</td></tr></tbody></table>`;
  return `<article class="alert" data-alert-id="${esc(a.id)}"><h3>${esc(a.kind)} <span class="sev sev-${a.severity}">${a.severity}</span></h3>`
    + `<p class="explain">${esc(explain(a))}</p><dl class="facts">${facts.map(([k, v]) => `<dt>${k}</dt><dd>${v}</dd>`).join('')}</dl>`
    + `<div class="evidence">${peers}${ports}${totals}</div></article>`;
}
