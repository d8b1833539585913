import { ChangeDetectionStrategy, Component, computed, inject, signal, viewChild } from '@angular/core';
import { toSignal } from '@angular/core/rxjs-interop';
import { FormGroupDirective, NonNullableFormBuilder, ReactiveFormsModule, Validators, type AbstractControl } from '@angular/forms';
import { MatAutocomplete, MatAutocompleteTrigger } from '@angular/material/autocomplete';
import { MatButton } from '@angular/material/button';
import { MatOption } from '@angular/material/core';
import { MatError, MatFormField, MatHint, MatLabel } from '@angular/material/form-field';
import { MatIcon } from '@angular/material/icon';
import { MatInput } from '@angular/material/input';
import type { Observable } from 'rxjs';

import type { SiteInput } from '@shared/contracts/setup';
import type { Site } from '@shared/contracts/studies';
import { SetupApi } from '../setup-api';
import { fieldErrorText } from '../study-editor/server-field-errors';
import { SetupFormWrite } from '../study-editor/setup-form-write';
import { StudyEditorContext } from '../study-editor/study-editor-context';
import { countryNameOf, matchingTimeZones } from './site-fields';

/** The Sites tab: the study's sites, a form to add or change one, and removal of a site that holds nothing. */
@Component({
  selector: 'app-site-manager',
  imports: [
    ReactiveFormsModule,
    MatAutocomplete,
    MatAutocompleteTrigger,
    MatButton,
    MatOption,
    MatFormField,
    MatLabel,
    MatHint,
    MatError,
    MatIcon,
    MatInput,
  ],
  templateUrl: './site-manager.html',
  styleUrl: './site-manager.scss',
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class SiteManager {
  private readonly api = inject(SetupApi);
  private readonly context = inject(StudyEditorContext);
  /** Resetting through the directive also forgets the submission, so a cleared form shows no errors. */
  private readonly formDirective = viewChild.required(FormGroupDirective);

  protected readonly sites = this.api.sitesOf(() => this.context.studyId());
  protected readonly siteList = computed<readonly Site[]>(() => (this.sites.hasValue() ? this.sites.value() : []));

  protected readonly form = inject(NonNullableFormBuilder).group({
    number: ['', [Validators.required, Validators.maxLength(16), Validators.pattern(/^\s*[A-Za-z0-9][A-Za-z0-9-]*\s*$/)]],
    name: ['', [Validators.required, Validators.maxLength(200)]],
    countryCode: ['', [Validators.required, Validators.pattern(/^\s*[A-Za-z]{2}\s*$/)]],
    timeZone: ['', [Validators.required, Validators.maxLength(64)]],
  });
  private readonly typedZone = toSignal(this.form.controls.timeZone.valueChanges, { initialValue: '' });
  private readonly typedCountry = toSignal(this.form.controls.countryCode.valueChanges, { initialValue: '' });
  protected readonly zoneSuggestions = computed(() => matchingTimeZones(this.typedZone()));
  protected readonly countryName = computed(() => countryNameOf(this.typedCountry()));

  /** The site being changed; null while adding a new one. */
  protected readonly editing = signal<Site | null>(null);
  /** The site whose removal waits for confirmation. */
  protected readonly confirmingRemoval = signal<string | null>(null);
  private readonly formWrite = new SetupFormWrite(this.form);
  protected readonly saving = this.formWrite.saving;
  protected readonly problem = this.formWrite.problem;
  protected readonly saved = this.formWrite.saved;

  protected fieldError(control: AbstractControl, label: string): string {
    if (control.errors?.['pattern'] && label === 'country') return 'Use the two-letter ISO code, such as NO, ES or CA.';
    return fieldErrorText(control.errors, label);
  }

  protected countryOf(site: Site): string {
    return countryNameOf(site.countryCode) || site.countryCode;
  }

  protected edit(site: Site): void {
    this.editing.set(site);
    this.clearMessages();
    this.form.reset({ number: site.number, name: site.name, countryCode: site.countryCode, timeZone: site.timeZone });
  }

  protected cancelEdit(): void {
    this.editing.set(null);
    this.clearMessages();
    this.formDirective().resetForm();
  }

  protected save(): void {
    this.form.markAllAsTouched();
    const studyId = this.context.studyId();
    if (this.form.invalid || !studyId) {
      this.problem.set('Some fields need attention; each says what is wrong.');
      return;
    }
    const value = this.form.getRawValue();
    const body: SiteInput = {
      number: value.number.trim(),
      name: value.name.trim(),
      countryCode: value.countryCode.trim().toUpperCase(),
      timeZone: value.timeZone.trim(),
    };
    const editing = this.editing();
    this.write(
      (reason) => (editing ? this.api.updateSite(studyId, editing.id, { ...body, reason }) : this.api.addSite(studyId, { ...body, reason })),
      (site) => {
        this.saved.set(editing ? `Site ${site.number} saved.` : `Site ${site.number} added.`);
        this.editing.set(null);
        this.formDirective().resetForm();
      },
    );
  }

  protected remove(site: Site): void {
    const studyId = this.context.studyId();
    if (!studyId) return;
    this.confirmingRemoval.set(null);
    this.write(
      (reason) => this.api.removeSite(studyId, site.id, reason),
      () => this.saved.set(`Site ${site.number} removed.`),
    );
  }

  private write<T>(send: (reason: string | undefined) => Observable<T>, done: (result: T) => void): void {
    this.formWrite.send(send, (result) => {
      done(result);
      this.sites.reload();
    });
  }

  private clearMessages(): void {
    this.formWrite.clear();
  }
}
