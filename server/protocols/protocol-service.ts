import { readdirSync, readFileSync } from 'node:fs';
import path from 'node:path';
import type { RuleSetComparison, RuleSetDetail, RuleSetRule, RuleSetSummary } from '../../shared/contracts/protocols.js';
import type { ResolvedProtocol } from '../../shared/spirometry/protocol.js';
import { AppError } from '../http/app-error.js';
import { PROTOCOLS_DIR, ProtocolCatalogueError, readProtocolFile } from './protocol-catalogue.js';
import { compareRules } from './rule-set-comparison.js';

/**
 * Looser than the catalogue's own pattern on purpose: a file with a near-miss name is listed with
 * the catalogue's reason (content and name disagree) instead of vanishing from the list.
 */
const FILE_NAME = /^(.+)\.v([1-9][0-9]*)\.json$/;

/** One file of the folder, read and checked. */
type CatalogueEntry =
  | { readonly id: string; readonly version: number; readonly file: string; readonly protocol: ResolvedProtocol; readonly notes: string | null }
  | { readonly id: string; readonly version: number | null; readonly file: string; readonly problem: string };

/** A parsed `<id>@<version>` (or `<id>`: latest). */
export interface RuleSetRef {
  readonly id: string;
  readonly version?: number;
}

/** Reads `<id>` or `<id>@<version>`; the route contracts check the spelling first. */
export function parseRuleSetRef(text: string): RuleSetRef {
  const [id, version] = text.trim().split('@');
  return version === undefined ? { id } : { id, version: Number(version) };
}

/** `ats-ers-2019@1`. */
export function ruleSetRefText(protocol: { readonly id: string; readonly version: number }): string {
  return `${protocol.id}@${protocol.version}`;
}

/**
 * The rule-set catalogue for people: every file listed (invalid ones with their reason), one version
 * in full, two versions compared. Files are read on each call: there are a handful, and an edited
 * folder shows at once.
 */
export class ProtocolService {
  constructor(private readonly dir: string = PROTOCOLS_DIR) {}

  /** Every rule-set file, sorted by id and version; a file that fails validation is listed with the reason. */
  list(): RuleSetSummary[] {
    return this.entries().map((entry) =>
      'problem' in entry
        ? {
            id: entry.id,
            version: entry.version,
            fileName: path.basename(entry.file),
            title: null,
            basedOn: null,
            notes: null,
            ruleCount: null,
            fromMemoryCount: null,
            problem: entry.problem,
          }
        : {
            id: entry.id,
            version: entry.version,
            fileName: path.basename(entry.file),
            title: entry.protocol.title,
            basedOn: entry.protocol.basedOn,
            notes: entry.notes,
            ruleCount: entry.protocol.rules.size,
            fromMemoryCount: [...entry.protocol.rules.values()].filter((rule) => rule.status === 'from-memory').length,
            problem: null,
          },
    );
  }

  /** One version with every rule in file order. */
  detail(id: string, version: number): RuleSetDetail {
    const entry = this.usable({ id, version });
    return {
      id: entry.protocol.id,
      version: entry.protocol.version,
      title: entry.protocol.title,
      basedOn: entry.protocol.basedOn,
      notes: entry.notes,
      rules: rulesOf(entry.protocol),
    };
  }

  /** Two versions (of one set or of two sets) rule by rule. */
  compare(from: RuleSetRef, to: RuleSetRef): RuleSetComparison {
    const before = this.usable(from).protocol;
    const after = this.usable(to).protocol;
    return {
      from: { id: before.id, version: before.version, title: before.title },
      to: { id: after.id, version: after.version, title: after.title },
      ...compareRules(rulesOf(before), rulesOf(after)),
    };
  }

  /** The rule set the engine runs; 404 naming the known ones when there is no such set, 422 when it fails validation. */
  resolve(ref: RuleSetRef): ResolvedProtocol {
    return this.usable(ref).protocol;
  }

  /** A study's own rule set: the pinned version, or the latest when none is pinned. */
  resolveForStudy(study: { readonly protocolRuleSetId: string; readonly protocolVersion: number | null }): ResolvedProtocol {
    return this.resolve({ id: study.protocolRuleSetId, version: study.protocolVersion ?? undefined });
  }

  private usable(ref: RuleSetRef): Extract<CatalogueEntry, { protocol: ResolvedProtocol }> {
    const entries = this.entries();
    const candidates = entries
      .filter((entry) => entry.id === ref.id && (ref.version === undefined || entry.version === ref.version))
      .sort((a, b) => (b.version ?? 0) - (a.version ?? 0));
    const wanted = ref.version === undefined ? ref.id : `${ref.id}@${ref.version}`;
    if (candidates.length === 0) {
      const known = entries.filter((entry) => !('problem' in entry)).map((entry) => `${entry.id}@${entry.version}`);
      throw new AppError(404, 'rule-set-unknown', `There is no rule set "${wanted}". Known rule sets: ${known.join(', ') || 'none'}.`, {
        known,
      });
    }
    const entry = candidates[0];
    if ('problem' in entry) {
      throw new AppError(422, 'rule-set-invalid', `The rule set "${wanted}" cannot be used: ${entry.problem}`);
    }
    return entry;
  }

  private entries(): CatalogueEntry[] {
    let names: string[];
    try {
      names = readdirSync(this.dir);
    } catch (error) {
      // A missing folder is a deployment fault: say which folder, once, instead of a stack trace.
      throw new AppError(500, 'rule-sets-unreadable', `The rule-set folder ${this.dir} cannot be read: ${(error as Error).message}`);
    }
    const entries = names
      .filter((name) => name.endsWith('.json'))
      .map((name) => readEntry(path.join(this.dir, name)));
    return entries.sort((a, b) => a.id.localeCompare(b.id) || (a.version ?? 0) - (b.version ?? 0));
  }
}

function readEntry(file: string): CatalogueEntry {
  const name = path.basename(file);
  const match = FILE_NAME.exec(name);
  if (!match) {
    return { id: name.replace(/\.json$/, ''), version: null, file, problem: `${name}: rule-set files are named <id>.v<version>.json` };
  }
  const id = match[1];
  const version = Number(match[2]);
  try {
    const protocol = readProtocolFile({ id, version, file });
    return { id, version, file, protocol, notes: notesOf(file) };
  } catch (error) {
    // Only the catalogue's own refusals are a listed problem; anything else is a fault to surface.
    if (error instanceof ProtocolCatalogueError) return { id, version, file, problem: error.message };
    throw error;
  }
}

/** `notes` is not part of the resolved protocol the engine uses; read it from the (already validated) file. */
function notesOf(file: string): string | null {
  const notes = (JSON.parse(readFileSync(file, 'utf8')) as { notes?: unknown }).notes;
  return typeof notes === 'string' ? notes : null;
}

function rulesOf(protocol: ResolvedProtocol): RuleSetRule[] {
  return [...protocol.rules.values()].map((rule) => ({ ...rule }));
}
