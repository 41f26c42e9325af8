// Side-effect module: each ingest path registers itself here. Capture path and flow-export paths
// add their `registerIngestor(...)` imports below.
import '../flowlog/register.js';
import '../flow/register.js';
export {};
