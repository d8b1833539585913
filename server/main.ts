// The AWS SDK version is pinned; its notice about future Node requirements does not apply to it.
process.env['AWS_SDK_JS_NODE_VERSION_SUPPORT_WARNING_DISABLED'] ??= 'true';

import { loadConfig } from './config.js';
import { startTidemark } from './runtime.js';
import { DEMO_PASSWORD, DEMO_USERS } from './seed/demo-study.js';

const config = loadConfig();
const running = await startTidemark(config);
const logger = running.deps.logger;

const lines = [
  '',
  `Tidemark is running at ${running.url}`,
  ...(running.fakes.identity
    ? [
        `Local identity provider: ${running.fakes.identity.issuer} (demo password for every account: ${DEMO_PASSWORD})`,
        ...DEMO_USERS.map((user) => `  ${user.email.padEnd(36)} ${user.roles.map((r) => r.role).join(', ')}`),
      ]
    : []),
  ...(running.fakes.storage ? [`Local S3-compatible storage: ${running.fakes.storage.endpoint}`] : []),
  ...(running.fakes.mail ? [`Local mail catcher: ${running.fakes.mail.smtpUrl}, messages saved in ${config.dataDir}/mail`] : []),
  '',
];
process.stdout.write(lines.join('\n') + '\n');

let stopping = false;
async function shutdown(signal: string): Promise<void> {
  if (stopping) return;
  stopping = true;
  logger.info({ signal }, 'shutting down');
  await running.close();
  process.exit(0);
}
process.on('SIGTERM', () => void shutdown('SIGTERM'));
process.on('SIGINT', () => void shutdown('SIGINT'));
