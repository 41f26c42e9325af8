import { registerIngestor } from '../ingest/index.js';
import { ingestIpfix, ingestNetflowV9 } from './file-ingest.js';

registerIngestor(['ipfix'], ingestIpfix);
registerIngestor(['netflow9'], ingestNetflowV9);
