import { parseArgs } from 'node:util';
import { AuthRepository } from '../auth/auth-repository.js';
import { AuthService } from '../auth/auth-service.js';
import { loadConfig } from '../config.js';
import { openDatabase } from '../db/database.js';
import { AppError } from '../http/app-error.js';
import { seedDemoStudy } from '../seed/demo-seed.js';
import { UserRepository } from '../users/user-repository.js';

/** `npm run --silent token -- --email EMAIL [--label TEXT]`: prints a new API token for an existing user. */
function main(): number {
  const { values } = parseArgs({
    options: { email: { type: 'string' }, label: { type: 'string' } },
    strict: true,
  });
  if (!values.email) {
    process.stderr.write('Usage: npm run --silent token -- --email EMAIL [--label TEXT]\n');
    return 2;
  }
  const config = loadConfig();
  const db = openDatabase(config.databaseFile);
  if (config.seedDemo) seedDemoStudy(db);
  try {
    const users = new UserRepository(db);
    const auth = new AuthService(new AuthRepository(db), users, config.session, () => new Date());
    const { token } = auth.issueToken(values.email, values.label ?? 'command line');
    process.stdout.write(`${token}\n`);
    return 0;
  } catch (error) {
    if (error instanceof AppError) {
      process.stderr.write(`${error.message}\n`);
      return 1;
    }
    throw error;
  } finally {
    db.$client.close();
  }
}

process.exitCode = main();
