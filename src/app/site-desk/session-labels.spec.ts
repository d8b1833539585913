import { describe, expect, it } from '@jest/globals';

import { ethnicitySchema, gradeSchema, sessionStatusSchema, uploadFormatSchema, verdictSchema } from '@shared/contracts/sessions';
import {
  ETHNICITY_LABELS,
  SESSION_STATUS_LABELS,
  VERDICT_LABELS,
  fileSizeText,
  gradeText,
  sessionStatusLabel,
  uploadFormatText,
} from './session-labels';

// Wording agreed for the site desk (product brief): words first, the icon only beside them.
describe('sessionStatusLabel', () => {
  it.each([
    ['awaiting-file', 'Awaiting file', 'hourglass_empty'],
    ['checked', 'Checked', 'task_alt'],
    ['rejected', 'Rejected', 'report'],
  ] as const)('tells status %s as "%s" with the %s icon', (status, label, icon) => {
    expect(sessionStatusLabel(status)).toMatchObject({ label, icon });
  });

  it('has words, an icon and a description for every status of the contract', () => {
    for (const status of sessionStatusSchema.options) {
      const { label, icon, description } = SESSION_STATUS_LABELS[status];
      expect([label, icon, description].every((text) => text.trim().length > 0)).toBe(true);
      expect(label).not.toBe(status);
    }
  });

  it('gives each status its own icon, so shape alone still tells them apart', () => {
    const icons = sessionStatusSchema.options.map((status) => SESSION_STATUS_LABELS[status].icon);
    expect(new Set(icons).size).toBe(icons.length);
  });
});

describe('verdict and grade wording', () => {
  it.each([
    ['acceptable', 'Acceptable'],
    ['usable', 'Usable'],
    ['not_acceptable', 'Not acceptable'],
  ] as const)('tells verdict %s as "%s"', (verdict, label) => {
    expect(VERDICT_LABELS[verdict].label).toBe(label);
  });

  it('covers every verdict of the contract', () => {
    expect(Object.keys(VERDICT_LABELS).sort()).toEqual([...verdictSchema.options].sort());
  });

  // Grade meanings after ATS/ERS 2019 (Graham et al. 2019), Table 10.
  it.each([
    ['A', 'Grade A (three or more acceptable efforts that agree closely)'],
    ['F', 'Grade F (no acceptable or usable effort)'],
    ['U', 'Grade U (no acceptable effort, but at least one usable)'],
    [null, 'Not graded yet'],
  ] as const)('writes grade %s as "%s"', (grade, text) => {
    expect(gradeText(grade)).toBe(text);
  });

  it('describes every grade of the contract', () => {
    for (const grade of gradeSchema.options) expect(gradeText(grade)).toMatch(new RegExp(`^Grade ${grade} \\(.+\\)$`));
  });
});

describe('file and demographic wording', () => {
  it.each([
    ['effort-zip', 'Several efforts (ZIP of CSV files)'],
    [null, 'Not recognised'],
  ] as const)('tells format %s as "%s"', (format, text) => {
    expect(uploadFormatText(format)).toBe(text);
  });

  it('names every format and ethnic group of the contract', () => {
    for (const format of uploadFormatSchema.options) expect(uploadFormatText(format)).not.toBe(format);
    expect(Object.keys(ETHNICITY_LABELS).sort()).toEqual([...ethnicitySchema.options].sort());
  });

  it.each([
    [95, '95 bytes'],
    [4_200, '4.2 kB'],
    [812_000, '812 kB'],
    [2_400_000, '2.4 MB'],
  ])('writes %i bytes as %s', (bytes, text) => {
    expect(fileSizeText(bytes)).toBe(text);
  });
});
