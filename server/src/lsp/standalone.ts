/**
 * The entry of dist/server.js, which the VS Code client starts (over Node IPC) and any LSP client
 * can start over stdio: `node dist/server.js --stdio`. The same server is `episcope server --stdio`.
 * Model code runs only when the client says the workspace is trusted, or with `--run-model-code`.
 */
import { startServer } from './server';

startServer({ exec: !process.argv.includes('--no-exec'), runModelCode: process.argv.includes('--run-model-code') });
