import type { AlertKind } from '../../detect/finding.js';

/**
 * tidewatch's own palette. Every pair that must be told apart differs in lightness or in pattern as
 * well as in hue, so the charts stay readable printed in greyscale or by readers who do not see hue.
 */
export const INK = '#1f2a33';
export const MUTED = '#5d6b75';
export const GRID = '#e3e7ea';

/** The chart series: observed is dark and solid, expected mid-grey dashed, the band a pale fill. */
export const SERIES = {
  observed: { stroke: '#123f5c', width: 1.8, dash: '' },
  expected: { stroke: '#6f7f88', width: 1.2, dash: '6 4' },
  band: { fill: '#d6e4ea', stroke: '#9db7c4', dash: '2 3' },
  episode: { fill: '#f2c37e', opacity: 0.45, hatch: '#a8621c' },
} as const;

/** One look per alert kind: a colour of its own lightness and a fill pattern (ids below). */
export interface KindLook { colour: string; pattern: 'solid' | 'diagonal' | 'dots' | 'cross' | 'horizontal' | 'vertical' }

export const KIND_LOOK: Readonly<Record<AlertKind, KindLook>> = {
  'volume-surge': { colour: '#7b2a24', pattern: 'solid' },
  'fan-in-flood': { colour: '#c4662f', pattern: 'diagonal' },
  'vertical-scan': { colour: '#2d5a86', pattern: 'dots' },
  'horizontal-scan': { colour: '#7ea6c8', pattern: 'cross' },
  'unusual-destination': { colour: '#4a7437', pattern: 'horizontal' },
  'traffic-shift': { colour: '#b69a35', pattern: 'vertical' },
};

/** The fill for a kind: its colour, or a pattern defined by `kindPatternDefs()`. */
export function kindFill(kind: AlertKind): string {
  const look = KIND_LOOK[kind];
  return look.pattern === 'solid' ? look.colour : `url(#pat-${kind})`;
}

/** `<pattern>` definitions for every patterned kind and the episode hatch, for one SVG's `<defs>`. */
export function kindPatternDefs(): string {
  const out: string[] = [];
  for (const [kind, look] of Object.entries(KIND_LOOK) as [AlertKind, KindLook][]) {
    if (look.pattern === 'solid') continue;
    out.push(`<pattern id="pat-${kind}" width="6" height="6" patternUnits="userSpaceOnUse">`
      + `<rect width="6" height="6" fill="${look.colour}" opacity="0.35"/>${PATTERN_MARKS[look.pattern](look.colour)}</pattern>`);
  }
  return out.join('');
}

export function episodeHatchDef(): string {
  const e = SERIES.episode;
  return `<pattern id="hatch-episode" width="8" height="8" patternUnits="userSpaceOnUse" patternTransform="rotate(45)">`
    + `<rect width="8" height="8" fill="${e.fill}" opacity="${e.opacity}"/><line x1="0" y1="0" x2="0" y2="8" stroke="${e.hatch}" stroke-width="1" opacity="0.5"/></pattern>`;
}

const PATTERN_MARKS: Record<Exclude<KindLook['pattern'], 'solid'>, (c: string) => string> = {
  diagonal: (c) => `<path d="M0,6 L6,0 M-1,1 L1,-1 M5,7 L7,5" stroke="${c}" stroke-width="1.6"/>`,
  dots: (c) => `<circle cx="3" cy="3" r="1.6" fill="${c}"/>`,
  cross: (c) => `<path d="M0,3 H6 M3,0 V6" stroke="${c}" stroke-width="1.2"/>`,
  horizontal: (c) => `<path d="M0,2 H6 M0,5 H6" stroke="${c}" stroke-width="1.3"/>`,
  vertical: (c) => `<path d="M2,0 V6 M5,0 V6" stroke="${c}" stroke-width="1.3"/>`,
};
