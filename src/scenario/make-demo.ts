/**
 * Writes the demo capture `captures/larkspur-demo.pcap` and its truth `captures/larkspur-demo.truth.json`:
 * the incident scenario shortened to one hour (15 minutes of warm-up, then the five episodes, each a
 * few minutes long), with 30 % of the connection rate and 5 % of the payload sizes so that it stays
 * under 5 MB while every host keeps a steady trickle of connections. Run after a build: `node dist/src/scenario/make-demo.js [OUTDIR]`.
 */
import { statSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { generateScenario } from './index.js';

/**
 * Episode sizes sit above the default minimum effect sizes of the detectors (2 MB a window for a
 * volume surge, 1 MB a window to a new peer), which the 5 % payload volume would otherwise undercut.
 */
export const DEMO = {
  kind: 'incident', seed: 60, hours: 1, scale: 0.3, volume: 0.05, snaplen: 78, name: 'larkspur-demo',
  attacks: { synPerSec: 40, surgeBytesPerMin: 3e6, uploadBytes: 12e6 },
} as const;

const outDir = process.argv[2] ?? fileURLToPath(new URL('../../../captures/', import.meta.url));
const { dataFile, truthFile } = await generateScenario({ ...DEMO, outDir });
process.stderr.write(`wrote ${dataFile} (${statSync(dataFile).size} bytes) and ${truthFile}\n`);
