import { ChangeDetectionStrategy, Component, effect, inject, untracked } from '@angular/core';
import { NonNullableFormBuilder, ReactiveFormsModule, Validators, type AbstractControl } from '@angular/forms';
import { MatButton, MatIconButton } from '@angular/material/button';
import { MatError, MatFormField, MatLabel } from '@angular/material/form-field';
import { MatIcon } from '@angular/material/icon';
import { MatInput } from '@angular/material/input';

import type { Schedule } from '@shared/contracts/sessions';
import type { ScheduleUpdate } from '@shared/contracts/setup';
import { SetupApi } from '../../setup-api';
import { fieldErrorText } from '../server-field-errors';
import { SetupFormWrite } from '../setup-form-write';
import { StudyEditorContext } from '../study-editor-context';

type VisitValue = Schedule['visits'][number];
type TimepointValue = Schedule['timepoints'][number];

const CODE_VALIDATORS = [Validators.required, Validators.maxLength(32), Validators.pattern(/^\s*[A-Za-z0-9][A-Za-z0-9._-]*\s*$/)];
const NAME_VALIDATORS = [Validators.required, Validators.maxLength(120)];
const WINDOW_VALIDATORS = [Validators.required, Validators.min(0), Validators.pattern(/^\d+$/)];

/**
 * The Schedule tab: visits with their planned day and window, and the timepoints tested within a
 * visit. The server refuses overlapping windows and the removal of anything sessions use; its
 * message is shown as it comes.
 */
@Component({
  selector: 'app-schedule-editor',
  imports: [ReactiveFormsModule, MatButton, MatIconButton, MatIcon, MatFormField, MatLabel, MatError, MatInput],
  templateUrl: './schedule-editor.html',
  styleUrl: './schedule-editor.scss',
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class ScheduleEditor {
  private readonly api = inject(SetupApi);
  private readonly fb = inject(NonNullableFormBuilder);
  private readonly context = inject(StudyEditorContext);

  protected readonly schedule = this.api.scheduleOf(() => this.context.studyId());
  protected readonly form = this.fb.group({
    visits: this.fb.array([this.visitGroup()]),
    timepoints: this.fb.array([this.timepointGroup()]),
  });

  private readonly formWrite = new SetupFormWrite(this.form);
  protected readonly saving = this.formWrite.saving;
  protected readonly problem = this.formWrite.problem;
  protected readonly saved = this.formWrite.saved;

  constructor() {
    effect(() => {
      if (this.schedule.hasValue()) {
        const schedule = this.schedule.value();
        untracked(() => this.showSchedule(schedule));
      }
    });
  }

  protected get visits() {
    return this.form.controls.visits;
  }

  protected get timepoints() {
    return this.form.controls.timepoints;
  }

  /** `days 26 to 32`: the window a row describes, once its numbers are readable. */
  protected windowText(index: number): string {
    const { dayOffset, windowBeforeDays, windowAfterDays } = this.visits.at(index).getRawValue();
    if ([dayOffset, windowBeforeDays, windowAfterDays].some((n) => n === null || !Number.isFinite(n))) return '';
    const from = dayOffset! - windowBeforeDays!;
    const to = dayOffset! + windowAfterDays!;
    return from === to ? `Day ${from} only` : `Days ${from} to ${to}`;
  }

  protected fieldError(control: AbstractControl, label: string): string {
    if (control.errors?.['pattern'] && label.includes('window')) return 'A window is a whole number of days, 0 or more.';
    return fieldErrorText(control.errors, label);
  }

  protected addVisit(): void {
    this.visits.push(this.visitGroup());
    this.form.markAsDirty();
  }

  protected removeVisit(index: number): void {
    this.visits.removeAt(index);
    this.form.markAsDirty();
  }

  protected addTimepoint(): void {
    this.timepoints.push(this.timepointGroup());
    this.form.markAsDirty();
  }

  protected removeTimepoint(index: number): void {
    this.timepoints.removeAt(index);
    this.form.markAsDirty();
  }

  protected save(): void {
    this.form.markAllAsTouched();
    const studyId = this.context.studyId();
    if (this.form.invalid || !studyId) {
      this.problem.set('Some fields need attention; each says what is wrong.');
      return;
    }
    const value = this.form.getRawValue();
    const body: ScheduleUpdate = {
      visits: value.visits.map((visit) => ({
        code: visit.code.trim(),
        name: visit.name.trim(),
        dayOffset: Number(visit.dayOffset),
        windowBeforeDays: Number(visit.windowBeforeDays),
        windowAfterDays: Number(visit.windowAfterDays),
      })),
      timepoints: value.timepoints.map((timepoint) => ({ code: timepoint.code.trim(), name: timepoint.name.trim() })),
    };
    this.formWrite.send((reason) => this.api.updateSchedule(studyId, { ...body, reason }), (schedule) => {
      this.schedule.set(schedule);
      this.saved.set('Schedule saved.');
      this.context.setup.reload();
    });
  }

  private showSchedule(schedule: Schedule): void {
    this.visits.clear();
    this.timepoints.clear();
    for (const visit of schedule.visits) this.visits.push(this.visitGroup(visit));
    for (const timepoint of schedule.timepoints) this.timepoints.push(this.timepointGroup(timepoint));
    // An empty schedule starts with one blank row of each, ready to fill in.
    if (schedule.visits.length === 0) this.visits.push(this.visitGroup());
    if (schedule.timepoints.length === 0) this.timepoints.push(this.timepointGroup());
    this.form.markAsPristine();
  }

  private visitGroup(visit?: VisitValue) {
    return this.fb.group({
      code: [visit?.code ?? '', CODE_VALIDATORS],
      name: [visit?.name ?? '', NAME_VALIDATORS],
      dayOffset: [visit?.dayOffset ?? (null as number | null), [Validators.required, Validators.pattern(/^-?\d+$/)]],
      windowBeforeDays: [visit?.windowBeforeDays ?? (0 as number | null), WINDOW_VALIDATORS],
      windowAfterDays: [visit?.windowAfterDays ?? (0 as number | null), WINDOW_VALIDATORS],
    });
  }

  private timepointGroup(timepoint?: TimepointValue) {
    return this.fb.group({
      code: [timepoint?.code ?? '', CODE_VALIDATORS],
      name: [timepoint?.name ?? '', NAME_VALIDATORS],
    });
  }
}
