/**
 * How `npm start` runs the server, read from package.json: the environment settings and Node
 * flags before `--import tsx` (fewer malloc arenas, a smaller young generation, a slower-growing
 * heap: see the README). Benchmarks and the load test start their server processes the same way,
 * so that what they measure is the process as deployed.
 */
import fs from 'node:fs';

export interface ServerLaunch {
  /** Environment settings the start script gives the server. */
  readonly env: Record<string, string>;
  /** Node flags, to put before `--import tsx` and the entry module. */
  readonly flags: string[];
}

export function serverLaunch(): ServerLaunch {
  const packageJson = JSON.parse(fs.readFileSync(new URL('../../package.json', import.meta.url), 'utf8')) as { scripts: { start: string } };
  const words = packageJson.scripts.start.split('&&').at(-1)!.trim().split(/\s+/);
  const node = words.indexOf('node');
  const imports = words.indexOf('--import');
  if (node === -1 || imports < node) throw new Error('package.json: the start script does not end with a node command importing tsx');
  const env = Object.fromEntries(words.slice(0, node).map((word) => word.split('=') as [string, string]));
  return { env, flags: words.slice(node + 1, imports) };
}
