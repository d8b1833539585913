import { DatePipe } from '@angular/common';
import { ChangeDetectionStrategy, Component, computed, inject, input } from '@angular/core';
import { MatIcon } from '@angular/material/icon';
import { RouterLink } from '@angular/router';

import { EQUATIONS_NAMES } from '@shared/contracts/reference-sets';
import { SetupReferenceSetsApi } from '../../setup-reference-sets-api';
import { fileSizeText, spotCheckDifference } from '../reference-set-labels';

/** The validation report of one imported set: its file, the known values and the layout checks. */
@Component({
  selector: 'app-reference-set-report',
  imports: [DatePipe, MatIcon, RouterLink],
  templateUrl: './reference-set-report.html',
  styleUrl: './reference-set-report.scss',
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class ReferenceSetReport {
  private readonly api = inject(SetupReferenceSetsApi);

  /** From the route. */
  readonly referenceSetId = input.required<string>();

  private readonly sets = this.api.referenceSets();
  protected readonly validation = this.api.validationOf(() => this.referenceSetId());
  protected readonly set = computed(() => (this.sets.hasValue() ? this.sets.value().find((set) => set.id === this.referenceSetId()) : undefined));
  protected readonly report = computed(() => (this.validation.hasValue() ? this.validation.value() : undefined));
  protected readonly names = EQUATIONS_NAMES;
  protected readonly fileSizeText = fileSizeText;
  protected readonly spotCheckDifference = spotCheckDifference;
}
