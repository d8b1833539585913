import { ChangeDetectionStrategy, Component, booleanAttribute, computed, input, output } from '@angular/core';
import { MatCheckbox } from '@angular/material/checkbox';
import { MatFormField, MatHint, MatLabel } from '@angular/material/form-field';
import { MatIcon } from '@angular/material/icon';
import { MatInput } from '@angular/material/input';
import { MatRadioButton, MatRadioGroup } from '@angular/material/radio';
import { MatTooltip } from '@angular/material/tooltip';

import type { EffortVerdict } from '@shared/contracts/reading';
import type { FindingDescription } from '../reading-api';
import { suggestionFor, verdictFor, type ReadEffort } from '../read-draft';
import { MEASURE_LABELS, VERDICT_LABELS, VERDICTS, findingValueText, type Measure, type Verdict } from '../read-labels';

/** A finding code the reader can tick, with what the engine made of it. */
interface FindingOption {
  readonly code: string;
  readonly title: string;
  readonly explanation: string;
  /** Whether the engine reported it on this effort. */
  readonly foundByEngine: boolean;
}

const MAX_COMMENT_LENGTH = 2000;

/**
 * The reader's judgement of one effort: FEV1 and FVC verdicts (the engine's suggestion marked,
 * overrides called out), the engine's findings with their numbers, the reader's own finding
 * codes and a comment. Presentational: every change goes out as a whole new verdict.
 */
@Component({
  selector: 'app-effort-verdict-panel',
  imports: [MatCheckbox, MatFormField, MatHint, MatLabel, MatIcon, MatInput, MatRadioButton, MatRadioGroup, MatTooltip],
  templateUrl: './effort-verdict-panel.html',
  styleUrl: './effort-verdict-panel.scss',
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class EffortVerdictPanel {
  readonly effort = input.required<ReadEffort>();
  readonly verdict = input.required<EffortVerdict>();
  /** The finding catalogue; empty while it loads (the engine's own codes are offered meanwhile). */
  readonly catalogue = input<readonly FindingDescription[]>([]);
  /** Whether the read may still change (false once signed or released). */
  readonly editable = input(true, { transform: booleanAttribute });
  readonly verdictChange = output<EffortVerdict>();

  protected readonly measures: readonly Measure[] = ['fev1', 'fvc'];
  protected readonly verdictOptions = VERDICTS;
  protected readonly verdictLabels = VERDICT_LABELS;
  protected readonly measureLabels = MEASURE_LABELS;
  protected readonly maxCommentLength = MAX_COMMENT_LENGTH;

  protected readonly engineFindings = computed(() =>
    this.effort().findings.map((finding) => ({
      ...finding,
      numbers: Object.entries(finding.values).map(([name, value]) => findingValueText(name, value)),
    })),
  );

  /** Codes the engine found first, then the rest of the catalogue, then any code only the reader knows. */
  protected readonly findingOptions = computed<readonly FindingOption[]>(() => {
    const found = new Set(this.effort().findings.map((finding) => finding.code));
    const byCode = new Map(this.catalogue().map((entry) => [entry.code, entry]));
    const codes = [...found, ...byCode.keys(), ...this.verdict().findings];
    return [...new Set(codes)]
      .map((code) => {
        const entry = byCode.get(code);
        const message = this.effort().findings.find((finding) => finding.code === code)?.message;
        return { code, title: entry?.title ?? code, explanation: entry?.explanation ?? message ?? '', foundByEngine: found.has(code) };
      })
      .sort((a, b) => Number(b.foundByEngine) - Number(a.foundByEngine));
  });

  protected current(measure: Measure): Verdict {
    return verdictFor(this.verdict(), measure);
  }

  protected suggested(measure: Measure): Verdict {
    return suggestionFor(this.effort(), measure);
  }

  protected setVerdict(measure: Measure, value: Verdict): void {
    const verdict = this.verdict();
    this.verdictChange.emit(measure === 'fev1' ? { ...verdict, fev1Verdict: value } : { ...verdict, fvcVerdict: value });
  }

  protected ticked(code: string): boolean {
    return this.verdict().findings.includes(code);
  }

  protected tick(code: string, ticked: boolean): void {
    const verdict = this.verdict();
    const others = verdict.findings.filter((finding) => finding !== code);
    this.verdictChange.emit({ ...verdict, findings: ticked ? [...others, code] : others });
  }

  protected writeComment(event: Event): void {
    this.verdictChange.emit({ ...this.verdict(), comment: (event.target as HTMLTextAreaElement).value });
  }
}
