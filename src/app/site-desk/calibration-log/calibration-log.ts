import { DecimalPipe } from '@angular/common';
import { ChangeDetectionStrategy, Component, DestroyRef, computed, effect, inject, signal, untracked } from '@angular/core';
import { takeUntilDestroyed } from '@angular/core/rxjs-interop';
import { NonNullableFormBuilder, ReactiveFormsModule, Validators } from '@angular/forms';
import { MatButton } from '@angular/material/button';
import { MatError, MatFormField, MatHint, MatLabel, MatSuffix } from '@angular/material/form-field';
import { MatIcon } from '@angular/material/icon';
import { MatInput } from '@angular/material/input';
import { MatProgressBar } from '@angular/material/progress-bar';
import { MatTableModule } from '@angular/material/table';

import type { CalibrationCheckRecord } from '@shared/contracts/sessions';
import { ApiError } from '../../core/http/api-error';
import { SiteDeskApi } from '../site-desk-api';
import { SiteDeskSelection } from '../site-desk-selection';
import { SitePicker } from '../site-picker/site-picker';
import { siteTimeErrorText, siteTimeValidator } from '../site-time-validator';
import { ZonedTimePipe } from '../zoned-time-pipe';
import { instantToZonedLocal, zonedLocalToInstant } from '../zoned-time';

/** Volume of the usual calibration syringe: a 3-L syringe (ATS/ERS 2019, Graham et al. 2019). */
const DEFAULT_SYRINGE_VOLUME_L = 3;
/** Largest volume the contract accepts for the syringe and the reading. */
const MAX_VOLUME_L = 10;

/** The calibration-check log of the chosen site's spirometers, and a form to add a check. */
@Component({
  selector: 'app-calibration-log',
  imports: [
    DecimalPipe,
    ReactiveFormsModule,
    MatButton,
    MatIcon,
    MatFormField,
    MatLabel,
    MatHint,
    MatError,
    MatSuffix,
    MatInput,
    MatProgressBar,
    MatTableModule,
    SitePicker,
    ZonedTimePipe,
  ],
  templateUrl: './calibration-log.html',
  styleUrl: './calibration-log.scss',
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class CalibrationLogPage {
  private readonly api = inject(SiteDeskApi);
  private readonly destroyRef = inject(DestroyRef);
  protected readonly selection = inject(SiteDeskSelection);

  protected readonly timeZone = computed(() => this.selection.site()?.timeZone);
  protected readonly checks = this.api.calibrationChecksOf(
    () => this.selection.studyId(),
    () => this.selection.siteId(),
  );
  protected readonly rows = computed<readonly CalibrationCheckRecord[]>(() => (this.checks.hasValue() ? this.checks.value() : []));
  protected readonly columns = ['checkedAt', 'device', 'syringe', 'measured', 'error', 'tolerance', 'source'] as const;

  private readonly fb = inject(NonNullableFormBuilder);
  private readonly volume = [Validators.required, Validators.min(0.001), Validators.max(MAX_VOLUME_L)];
  protected readonly form = this.fb.group({
    deviceSerialNumber: this.fb.control('', [Validators.required, Validators.maxLength(100)]),
    syringeVolumeL: this.fb.control<number | null>(DEFAULT_SYRINGE_VOLUME_L, this.volume),
    measuredVolumeL: this.fb.control<number | null>(null, this.volume),
    checkedAt: this.fb.control('', [Validators.required, siteTimeValidator(() => this.timeZone())]),
  });

  /** Whether the check is being saved. */
  protected readonly saving = signal(false);
  protected readonly problem = signal('');
  /** What the server made of the last check saved, said once in the live region. */
  protected readonly savedText = signal('');

  constructor() {
    effect(() => {
      const zone = this.timeZone();
      untracked(() => {
        if (zone) this.form.controls.checkedAt.setValue(instantToZonedLocal(new Date(), zone));
      });
    });
  }

  protected volumeError(field: 'syringeVolumeL' | 'measuredVolumeL'): string {
    const errors = this.form.controls[field].errors;
    if (errors?.['required']) return 'Give the volume in litres.';
    if (errors?.['min'] || errors?.['max']) return `Give a volume above 0 and up to ${MAX_VOLUME_L} L.`;
    return '';
  }

  protected checkedAtError(): string {
    const errors = this.form.controls.checkedAt.errors;
    return errors?.['required'] ? 'Give the date and time of the check.' : siteTimeErrorText(errors);
  }

  protected addCheck(): void {
    this.form.markAllAsTouched();
    const studyId = this.selection.studyId();
    const site = this.selection.site();
    const value = this.form.getRawValue();
    const checkedAt = site ? zonedLocalToInstant(value.checkedAt, site.timeZone) : null;
    if (this.form.invalid || !studyId || !site || !checkedAt?.ok || value.syringeVolumeL === null || value.measuredVolumeL === null) {
      this.problem.set('Some fields need attention; each says what is missing.');
      return;
    }
    this.problem.set('');
    this.savedText.set('');
    this.saving.set(true);
    const entry = {
      deviceSerialNumber: value.deviceSerialNumber.trim(),
      syringeVolumeL: value.syringeVolumeL,
      measuredVolumeL: value.measuredVolumeL,
      checkedAt: checkedAt.iso,
    };
    this.api
      .addCalibrationCheck(studyId, site.id, entry)
      .pipe(takeUntilDestroyed(this.destroyRef))
      .subscribe({
        next: (record) => {
          this.saving.set(false);
          this.savedText.set(`Check saved. ${record.toleranceText}`);
          this.form.controls.measuredVolumeL.reset();
          this.checks.reload();
        },
        error: (error: unknown) => {
          this.saving.set(false);
          // ApiError: the server refused the entry and says why; anything else is unexpected.
          if (!(error instanceof ApiError)) throw error;
          this.problem.set(error.message);
        },
      });
  }
}
