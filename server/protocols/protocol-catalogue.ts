/**
 * Reads the versioned protocol rule sets in `protocols/` (files named
 * `<id>.v<version>.json`) and validates them with the shared schema.
 */
import { readdirSync, readFileSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { ProtocolRuleSetError, resolveProtocol, type ResolvedProtocol } from '../../shared/spirometry/protocol.js';

/** The repository's `protocols/` folder. */
export const PROTOCOLS_DIR = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../../protocols');

/** The rule set used when none is named. */
export const DEFAULT_PROTOCOL_ID = 'ats-ers-2019';

const FILE_NAME = /^([a-z0-9]+(?:-[a-z0-9]+)*)\.v([1-9][0-9]*)\.json$/;

/** A rule-set file that cannot be used; the message names the file and, when it can, the rule. */
export class ProtocolCatalogueError extends Error {
  constructor(
    message: string,
    readonly file?: string,
    readonly ruleId?: string,
  ) {
    super(message);
    this.name = 'ProtocolCatalogueError';
  }
}

/** One rule-set file of the catalogue. */
export interface ProtocolFile {
  readonly id: string;
  readonly version: number;
  readonly file: string;
}

/** Lists the rule-set files of a folder by id and version (without reading them). */
export function listProtocolFiles(dir: string = PROTOCOLS_DIR): ProtocolFile[] {
  let names: string[];
  try {
    names = readdirSync(dir);
  } catch (error) {
    // A missing folder is a setup problem the operator must see by name.
    throw new ProtocolCatalogueError(`protocol folder ${dir} cannot be read: ${(error as Error).message}`);
  }
  const files: ProtocolFile[] = [];
  for (const name of names.sort()) {
    if (!name.endsWith('.json')) continue;
    const match = FILE_NAME.exec(name);
    if (!match) {
      throw new ProtocolCatalogueError(`${name}: rule-set files are named <id>.v<version>.json`, path.join(dir, name));
    }
    files.push({ id: match[1], version: Number(match[2]), file: path.join(dir, name) });
  }
  return files;
}

/** Reads and validates one rule-set file, checking that its name matches its id and version. */
export function readProtocolFile(entry: ProtocolFile): ResolvedProtocol {
  const name = path.basename(entry.file);
  let json: unknown;
  try {
    json = JSON.parse(readFileSync(entry.file, 'utf8'));
  } catch (error) {
    throw new ProtocolCatalogueError(`${name}: not valid JSON (${(error as Error).message})`, entry.file);
  }
  let protocol: ResolvedProtocol;
  try {
    protocol = resolveProtocol(json);
  } catch (error) {
    if (error instanceof ProtocolRuleSetError) {
      throw new ProtocolCatalogueError(`${name}: ${error.message}`, entry.file, error.ruleId);
    }
    throw error;
  }
  if (protocol.id !== entry.id || protocol.version !== entry.version) {
    throw new ProtocolCatalogueError(
      `${name}: holds ${protocol.id} version ${protocol.version}; the file name must be ${protocol.id}.v${protocol.version}.json`,
      entry.file,
    );
  }
  return protocol;
}

/** Reads and validates every rule set in the folder; throws on the first invalid file. */
export function loadProtocolCatalogue(dir: string = PROTOCOLS_DIR): ResolvedProtocol[] {
  return listProtocolFiles(dir).map(readProtocolFile);
}

/**
 * Loads one rule set: `id` (latest version), `id.vN` or `id@N`; the ATS/ERS 2019
 * set when no id is given.
 */
export function loadProtocol(id: string = DEFAULT_PROTOCOL_ID, dir: string = PROTOCOLS_DIR): ResolvedProtocol {
  const match = /^(.+?)(?:(?:\.v|@)([1-9][0-9]*))?$/.exec(id.trim());
  const wantedId = match?.[1] ?? id;
  const wantedVersion = match?.[2] !== undefined ? Number(match[2]) : undefined;
  const files = listProtocolFiles(dir);
  const candidates = files
    .filter((file) => file.id === wantedId && (wantedVersion === undefined || file.version === wantedVersion))
    .sort((a, b) => b.version - a.version);
  if (candidates.length === 0) {
    const known = [...new Set(files.map((file) => file.id))].join(', ') || 'none';
    throw new ProtocolCatalogueError(`unknown protocol "${id}"; known: ${known}`);
  }
  return readProtocolFile(candidates[0]);
}
