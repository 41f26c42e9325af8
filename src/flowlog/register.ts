import { registerIngestor } from '../ingest/index.js';
import { ingestIpfix, ingestNetflowV9 } from './file-ingest.js';
import { ingestCsv, ingestJsonl } from './textlog.js';

registerIngestor(['ipfix'], ingestIpfix);
registerIngestor(['netflow9'], ingestNetflowV9);
registerIngestor(['csv'], ingestCsv);
registerIngestor(['jsonl'], ingestJsonl);
