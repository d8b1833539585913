import { afterAll, beforeAll, describe, expect, it } from '@jest/globals';
import { mkdtempSync, readFileSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import {
  PROTOCOLS_DIR,
  ProtocolCatalogueError,
  listProtocolFiles,
  loadProtocol,
  loadProtocolCatalogue,
} from './protocol-catalogue.js';

const defaultFile = path.join(PROTOCOLS_DIR, 'ats-ers-2019.v1.json');
const defaultSet = JSON.parse(readFileSync(defaultFile, 'utf8')) as { rules: { id: string; value: unknown }[]; version: number };

function refusal(load: () => unknown): ProtocolCatalogueError {
  try {
    load();
  } catch (error) {
    if (error instanceof ProtocolCatalogueError) return error;
    throw error;
  }
  throw new Error('the rule set was accepted');
}

describe('protocol catalogue', () => {
  let dir: string;
  beforeAll(() => {
    dir = mkdtempSync(path.join(os.tmpdir(), 'tidemark-protocols-'));
  });
  afterAll(() => {
    rmSync(dir, { recursive: true, force: true });
  });

  it('every JSON file in protocols/ validates and is named after its id and version', () => {
    const jsonFiles = readdirSync(PROTOCOLS_DIR).filter((name) => name.endsWith('.json'));
    const protocols = loadProtocolCatalogue();
    expect(protocols).toHaveLength(jsonFiles.length);
    expect(protocols.map((protocol) => `${protocol.id}.v${protocol.version}.json`).sort()).toEqual(jsonFiles.sort());
  });

  it('loads the ATS/ERS 2019 set by default', () => {
    const protocol = loadProtocol();
    expect(protocol.id).toBe('ats-ers-2019');
    // Graham BL et al. 2019 (ATS/ERS), Table 10: grade A/B tolerance 0.150 L above age 6.
    expect(protocol.grading.overChildAge.abToleranceL).toBe(0.15);
  });

  it('the strict example tightens the endpoint grade only', () => {
    const strict = loadProtocol('ats-ers-2019-endpoint-strict');
    const standard = loadProtocol('ats-ers-2019@1');
    expect(strict.study.minGradeForEndpoint).toBe('B');
    expect(strict.engine).toEqual(standard.engine);
    expect(strict.grading).toEqual(standard.grading);
  });

  it('picks the latest version unless one is named', () => {
    writeFileSync(path.join(dir, 'ats-ers-2019.v1.json'), JSON.stringify(defaultSet));
    writeFileSync(path.join(dir, 'ats-ers-2019.v2.json'), JSON.stringify({ ...defaultSet, version: 2 }));
    expect(loadProtocol('ats-ers-2019', dir).version).toBe(2);
    expect(loadProtocol('ats-ers-2019.v1', dir).version).toBe(1);
    expect(listProtocolFiles(dir).map((file) => file.version)).toEqual([1, 2]);
  });

  it('refuses an invalid rule with a message naming the file and the rule', () => {
    const broken = {
      ...defaultSet,
      version: 3,
      rules: defaultSet.rules.map((rule) => (rule.id === 'eofe.plateau-max-volume-change' ? { ...rule, value: 'small' } : rule)),
    };
    writeFileSync(path.join(dir, 'ats-ers-2019.v3.json'), JSON.stringify(broken));
    const error = refusal(() => loadProtocol('ats-ers-2019', dir));
    expect(error.message).toMatch(/^ats-ers-2019\.v3\.json: rule "eofe\.plateau-max-volume-change": value must be a number/);
    expect(error.ruleId).toBe('eofe.plateau-max-volume-change');
    expect(refusal(() => loadProtocolCatalogue(dir)).file).toBe(path.join(dir, 'ats-ers-2019.v3.json'));
    rmSync(path.join(dir, 'ats-ers-2019.v3.json'));
  });

  it('refuses a file whose name does not match its content', () => {
    writeFileSync(path.join(dir, 'other-set.v1.json'), JSON.stringify(defaultSet));
    expect(refusal(() => loadProtocol('other-set', dir)).message).toMatch(/holds ats-ers-2019 version 1; the file name must be ats-ers-2019\.v1\.json/);
    rmSync(path.join(dir, 'other-set.v1.json'));
  });

  it('refuses an unknown protocol id, listing the known ones', () => {
    expect(refusal(() => loadProtocol('no-such-set')).message).toMatch(/unknown protocol "no-such-set"; known: .*ats-ers-2019/);
  });

  it('refuses broken JSON, naming the file', () => {
    writeFileSync(path.join(dir, 'broken.v1.json'), '{ "id": ');
    expect(refusal(() => loadProtocol('broken', dir)).message).toMatch(/^broken\.v1\.json: not valid JSON/);
    rmSync(path.join(dir, 'broken.v1.json'));
  });
});
