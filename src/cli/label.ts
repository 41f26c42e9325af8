import { Argument, Option, type Command } from 'commander';
import type { Alert } from '../alert/alert.js';
import { mainPeer } from '../store/labels.js';
import { LABEL_SCOPES, type Label, type LabelScope, type Verdict } from '../store/store.js';
import { escapeControls } from '../sink/console.js';
import { openExisting } from './alerts.js';
import { usageError } from './exit.js';

interface LabelRaw { state: string; note?: string; scope: LabelScope }

/**
 * `tidewatch label ID benign|malicious` records an analyst's verdict on an alert; later episodes in
 * the label's scope are suppressed (benign) or raised one severity step (malicious) by the next runs
 * with the same state. `tidewatch labels` lists them.
 */
export function register(program: Command): void {
  program
    .command('label')
    .description('label an alert benign or malicious; later episodes in its scope are suppressed or raised')
    .argument('<id>', 'alert id (tw1-...)')
    .addArgument(new Argument('<verdict>', 'benign or malicious').choices(['benign', 'malicious']))
    .requiredOption('--state <file>', 'state file')
    .option('--note <text>', 'free text kept with the label', '')
    .addOption(new Option('--scope <scope>', 'what later episodes the label covers: same kind, host and role (episode); '
      + 'any alert on the host (host); on the host with the same main peer (host-peer); same host and kind (host-kind)')
      .choices([...LABEL_SCOPES]).default('episode'))
    .action((id: string, verdict: Verdict, raw: LabelRaw) => {
      const store = openExisting(raw.state);
      try {
        const line = store.lastLine(id);
        if (!line) throw usageError(`no alert ${id} in ${raw.state}`);
        const a = JSON.parse(line.json) as Alert;
        const l = store.addLabel({
          alertId: id, verdict, scope: raw.scope, kind: a.kind, host: a.host, role: a.role,
          peer: mainPeer(a), episodeStart: line.start_ms, note: raw.note ?? '', created: new Date().toISOString(),
        });
        process.stdout.write(`${describe(l)}\n`);
      } finally {
        store.close();
      }
    });

  program
    .command('labels')
    .description('list the labels of a state file')
    .requiredOption('--state <file>', 'state file')
    .addOption(new Option('--format <fmt>', 'output format').choices(['pretty', 'jsonl']).default('pretty'))
    .action((raw: { state: string; format: 'pretty' | 'jsonl' }) => {
      const store = openExisting(raw.state);
      try {
        const lines = store.labels().map((l) => (raw.format === 'jsonl' ? JSON.stringify(l) : describe(l)));
        if (lines.length > 0) process.stdout.write(`${lines.join('\n')}\n`);
      } finally {
        store.close();
      }
    });
}

function describe(l: Label): string {
  const peer = l.peer ? ` peer ${l.peer}` : '';
  const note = l.note ? ` "${l.note}"` : '';
  return escapeControls(`label ${l.id}: ${l.verdict} ${l.scope} from ${l.alertId} (${l.kind} ${l.host} ${l.role}${peer}) at ${l.created}${note}`);
}
