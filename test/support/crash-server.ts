/**
 * A Tidemark process for crash tests: started as a child, it prints its URL as one JSON line,
 * and kills itself with SIGKILL right after storing a file whose name contains
 * "crash-after-store", i.e. between the stored object and the database commit.
 */
import { pino } from 'pino';
import { loadConfig } from '../../server/config.js';
import { startTidemark } from '../../server/runtime.js';

const running = await startTidemark(loadConfig(), {
  logger: pino({ level: 'silent' }),
  uploadFaults: {
    afterObjectStored: (originalName) => {
      if (originalName.includes('crash-after-store')) process.kill(process.pid, 'SIGKILL');
    },
  },
});
process.stdout.write(`${JSON.stringify({ url: running.url })}\n`);
