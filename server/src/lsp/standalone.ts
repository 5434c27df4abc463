/**
 * The entry of dist/server.js, which the VS Code client starts (over Node IPC) and any LSP client
 * can start over stdio: `node dist/server.js --stdio`. The same server is `episcope server --stdio`.
 */
import { startServer } from './server';

startServer({ exec: !process.argv.includes('--no-exec') });
