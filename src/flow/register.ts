import { registerIngestor } from '../ingest/index.js';
import { ingestCapture } from './ingest.js';

registerIngestor(['pcap', 'pcapng'], ingestCapture);
