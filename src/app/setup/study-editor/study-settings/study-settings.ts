import { ChangeDetectionStrategy, Component, computed, effect, inject, untracked } from '@angular/core';
import { takeUntilDestroyed } from '@angular/core/rxjs-interop';
import { NonNullableFormBuilder, ReactiveFormsModule, Validators, type AbstractControl, type ValidationErrors } from '@angular/forms';
import { MatButton } from '@angular/material/button';
import { MatCheckbox } from '@angular/material/checkbox';
import { MatError, MatFormField, MatHint, MatLabel, MatSuffix } from '@angular/material/form-field';
import { MatInput } from '@angular/material/input';
import { MatRadioButton, MatRadioGroup } from '@angular/material/radio';
import { MatOption, MatSelect } from '@angular/material/select';

import { MAX_TURNAROUND_HOURS, type ReadDesign, type StudySetup, type StudySetupUpdate } from '@shared/contracts/setup';
import { SetupApi } from '../../setup-api';
import { fieldErrorText } from '../server-field-errors';
import { SetupFormWrite } from '../setup-form-write';
import { StudyEditorContext } from '../study-editor-context';

/** Separates rule-set id and version in the select's value; `latest` follows new versions. */
const LATEST = 'latest';

const READ_DESIGNS: readonly { value: ReadDesign; label: string; hint: string }[] = [
  { value: 'single', label: 'Single read', hint: 'One over-reader reads each session.' },
  { value: 'dual-all', label: 'Dual read, every session', hint: 'Two readers; an adjudicator settles disagreements.' },
  { value: 'dual-sample', label: 'Dual read, a sample', hint: 'A random fraction of sessions is read twice.' },
];

/** A dual-sample design needs a fraction above 0 and at most 1. */
function dualSampleFractionValidator(control: AbstractControl<number | null>): ValidationErrors | null {
  if (control.parent?.get('readDesign')?.value !== 'dual-sample') return null;
  const value = control.value;
  return value !== null && value > 0 && value <= 1 ? null : { fraction: true };
}

/** The Study tab: identity of the study, its protocol rule set, read design, blinding and turnaround. */
@Component({
  selector: 'app-study-settings',
  imports: [
    ReactiveFormsModule,
    MatButton,
    MatCheckbox,
    MatFormField,
    MatLabel,
    MatHint,
    MatError,
    MatSuffix,
    MatInput,
    MatRadioGroup,
    MatRadioButton,
    MatSelect,
    MatOption,
  ],
  templateUrl: './study-settings.html',
  styleUrl: './study-settings.scss',
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class StudySettings {
  private readonly api = inject(SetupApi);
  protected readonly context = inject(StudyEditorContext);

  protected readonly readDesigns = READ_DESIGNS;
  protected readonly maxTurnaround = MAX_TURNAROUND_HOURS;

  private readonly fb = inject(NonNullableFormBuilder);
  protected readonly form = this.fb.group({
    code: ['', [Validators.required, Validators.maxLength(32), Validators.pattern(/^\s*[A-Za-z0-9][A-Za-z0-9._-]*\s*$/)]],
    title: ['', [Validators.required, Validators.maxLength(300)]],
    sponsor: ['', [Validators.required, Validators.maxLength(200)]],
    indication: ['', [Validators.required, Validators.maxLength(200)]],
    protocol: ['', Validators.required],
    readDesign: ['single' as ReadDesign, Validators.required],
    dualSampleFraction: [null as number | null, dualSampleFractionValidator],
    blinding: this.fb.group({
      readersSeeVisit: true,
      readersSeeTimepoint: true,
      readersSeeBronchodilator: true,
      monitorsBlinded: true,
    }),
    turnaroundHours: [48 as number | null, [Validators.required, Validators.min(1), Validators.max(MAX_TURNAROUND_HOURS)]],
  });

  protected readonly setup = computed(() => (this.context.setup.hasValue() ? this.context.setup.value() : undefined));
  /** Pinned versions and "latest" of each rule set, for the select. */
  protected readonly protocolOptions = computed(() => {
    const choices = this.setup()?.protocolChoices ?? [];
    const ids = [...new Set(choices.map((choice) => choice.id))];
    return ids.flatMap((id) => {
      const versions = choices.filter((choice) => choice.id === id).sort((a, b) => b.version - a.version);
      return [
        { value: `${id}@${LATEST}`, label: `${versions[0].title} (${id}), latest version: now v${versions[0].version}` },
        ...versions.map((choice) => ({ value: `${id}@${choice.version}`, label: `${choice.title} (${id}), pinned to v${choice.version}` })),
      ];
    });
  });

  private readonly formWrite = new SetupFormWrite(this.form);
  protected readonly saving = this.formWrite.saving;
  protected readonly problem = this.formWrite.problem;
  protected readonly saved = this.formWrite.saved;

  constructor() {
    effect(() => {
      const setup = this.setup();
      if (setup) untracked(() => this.showSetup(setup));
    });
    this.form.controls.readDesign.valueChanges
      .pipe(takeUntilDestroyed())
      .subscribe(() => this.form.controls.dualSampleFraction.updateValueAndValidity());
  }

  protected fieldError(control: AbstractControl, label: string): string {
    if (control.errors?.['fraction']) return 'Give the fraction of sessions read twice: above 0 and at most 1 (0.2 is 20 %).';
    return fieldErrorText(control.errors, label);
  }

  protected save(): void {
    this.form.markAllAsTouched();
    const studyId = this.context.studyId();
    if (this.form.invalid || !studyId) {
      this.problem.set('Some fields need attention; each says what is wrong.');
      return;
    }
    const value = this.form.getRawValue();
    const [protocolRuleSetId, version] = value.protocol.split('@');
    const body: StudySetupUpdate = {
      code: value.code.trim(),
      title: value.title.trim(),
      sponsor: value.sponsor.trim(),
      indication: value.indication.trim(),
      protocolRuleSetId,
      protocolVersion: version === LATEST ? null : Number(version),
      readDesign: value.readDesign,
      dualSampleFraction: value.readDesign === 'dual-sample' ? value.dualSampleFraction : null,
      blinding: value.blinding,
      turnaroundHours: value.turnaroundHours ?? 0,
    };
    this.formWrite.send((reason) => this.api.updateSetup(studyId, { ...body, reason }), (setup) => {
      this.context.replaceSetup(setup);
      this.saved.set('Study settings saved.');
    });
  }

  private showSetup(setup: StudySetup): void {
    this.form.reset({
      code: setup.code,
      title: setup.title,
      sponsor: setup.sponsor,
      indication: setup.indication,
      protocol: `${setup.protocolRuleSetId}@${setup.protocolVersion ?? LATEST}`,
      readDesign: setup.readDesign,
      dualSampleFraction: setup.readDesign === 'dual-sample' ? setup.dualSampleFraction : null,
      blinding: setup.blinding,
      turnaroundHours: setup.turnaroundHours,
    });
  }
}
