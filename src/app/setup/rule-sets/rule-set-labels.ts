import type { RuleStatus, RuleSetRule, RuleSetSummary } from '@shared/contracts/protocols';

/** How a rule's status is told: words first, an icon beside them, a sentence on what it means. */
export interface RuleStatusLabel {
  readonly label: string;
  /** Material Symbols ligature; never the only carrier of meaning. */
  readonly icon: string;
  readonly description: string;
}

/** Words for each rule status, as `protocols/README.md` defines them. */
export const RULE_STATUS_LABELS: Readonly<Record<RuleStatus, RuleStatusLabel>> = {
  verified: {
    label: 'Verified',
    icon: 'verified',
    description: 'Read in the standard, or in a faithful transcription of it.',
  },
  'from-memory': {
    label: 'From memory',
    icon: 'warning',
    description: 'Recalled, not read in the primary text: check it against the standard before relying on it.',
  },
  'common-practice': {
    label: 'Common practice',
    icon: 'groups',
    description: 'No published source: what laboratories commonly do.',
  },
};

/** Unit words where the bare symbol would puzzle a reader. */
const UNIT_WORDS: Readonly<Record<string, string>> = {
  count: '',
  fraction: '',
  years: 'years',
};

/** A rule's value as people read it: `0.15 L`, `yes`, `5 %`, `3`, or the text; an empty list reads "none". */
export function ruleValueText(rule: Pick<RuleSetRule, 'value' | 'unit'>): string {
  const { value, unit } = rule;
  if (typeof value === 'boolean') return value ? 'yes' : 'no';
  if (typeof value === 'string') return value.trim() === '' ? 'none' : value;
  if (unit === 'fraction') return `${formatNumber(value * 100)} %`;
  const word = unit in UNIT_WORDS ? UNIT_WORDS[unit] : unit;
  return word ? `${formatNumber(value)} ${word}` : formatNumber(value);
}

/** `ats-ers-2019@1`: how the API names one version. */
export function ruleSetRef(entry: { readonly id: string; readonly version: number | null }): string {
  return entry.version === null ? entry.id : `${entry.id}@${entry.version}`;
}

/** Whether a catalogue entry can be viewed, compared and replayed. */
export function isUsable(entry: RuleSetSummary): entry is RuleSetSummary & { version: number; title: string } {
  return entry.problem === null && entry.version !== null && entry.title !== null;
}

/** Up to six significant digits, without the float noise of `0.1 * 100`. */
function formatNumber(value: number): string {
  return String(Number(value.toPrecision(6)));
}
