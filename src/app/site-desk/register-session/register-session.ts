import {
  ChangeDetectionStrategy,
  Component,
  DestroyRef,
  ElementRef,
  computed,
  effect,
  inject,
  signal,
  untracked,
} from '@angular/core';
import { takeUntilDestroyed } from '@angular/core/rxjs-interop';
import { NonNullableFormBuilder, ReactiveFormsModule } from '@angular/forms';
import { MatButton } from '@angular/material/button';
import { MatError, MatFormField, MatHint, MatLabel, MatSuffix } from '@angular/material/form-field';
import { MatIcon } from '@angular/material/icon';
import { MatInput } from '@angular/material/input';
import { MatRadioButton, MatRadioGroup } from '@angular/material/radio';
import { MatOption, MatSelect } from '@angular/material/select';
import { Router, RouterLink } from '@angular/router';

import type { SessionDetail, Subject, UploadResult } from '@shared/contracts/sessions';
import { ApiError } from '../../core/http/api-error';
import { EnrolSubject } from '../enrol-subject/enrol-subject';
import { BRONCHODILATOR_LABELS, ETHNICITY_LABELS, type Ethnicity } from '../session-labels';
import { SessionFileUpload } from '../session-file-upload/session-file-upload';
import { SiteDeskApi } from '../site-desk-api';
import { SiteDeskSelection } from '../site-desk-selection';
import { SitePicker } from '../site-picker/site-picker';
import { ZonedTimePipe } from '../zoned-time-pipe';
import { formatUtcOffset, instantToZonedLocal, utcOffsetMinutes } from '../zoned-time';
import {
  buildRegistrationForm,
  registrationFieldError,
  toRegisterSession,
  type RegistrationValue,
} from './registration-form';

/**
 * Registers a session (who, which visit, when, demographics, technician, device), then takes its
 * file. The session exists from the first step on, so a file can also follow later.
 */
@Component({
  selector: 'app-register-session',
  imports: [
    ReactiveFormsModule,
    MatButton,
    MatIcon,
    MatFormField,
    MatLabel,
    MatHint,
    MatError,
    MatSuffix,
    MatInput,
    MatSelect,
    MatOption,
    MatRadioGroup,
    MatRadioButton,
    RouterLink,
    EnrolSubject,
    SessionFileUpload,
    SitePicker,
    ZonedTimePipe,
  ],
  templateUrl: './register-session.html',
  styleUrl: './register-session.scss',
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class RegisterSessionPage {
  private readonly api = inject(SiteDeskApi);
  private readonly router = inject(Router);
  private readonly host = inject<ElementRef<HTMLElement>>(ElementRef);
  private readonly destroyRef = inject(DestroyRef);
  protected readonly selection = inject(SiteDeskSelection);

  protected readonly timeZone = computed(() => this.selection.site()?.timeZone);
  protected readonly form = buildRegistrationForm(inject(NonNullableFormBuilder), () => this.timeZone());
  protected readonly schedule = this.api.scheduleOf(() => this.selection.studyId());
  protected readonly subjects = this.api.subjectsOf(
    () => this.selection.studyId(),
    () => this.selection.siteId(),
  );
  protected readonly subjectList = computed<readonly Subject[]>(() => (this.subjects.hasValue() ? this.subjects.value() : []));

  protected readonly bronchodilatorOptions = Object.entries(BRONCHODILATOR_LABELS) as ['pre' | 'post', string][];
  protected readonly ethnicityOptions = Object.entries(ETHNICITY_LABELS) as [Ethnicity, string][];

  /** `UTC+01:00 today`: the offset the site's clock runs at now, to help read the field. */
  protected readonly offsetNow = computed(() => {
    const zone = this.timeZone();
    return zone ? `UTC${formatUtcOffset(utcOffsetMinutes(new Date(), zone))}` : '';
  });

  /** Whether the registration is being sent. */
  protected readonly saving = signal(false);
  protected readonly submitProblem = signal('');
  /** The registered session, once the first step is done; the file step follows. */
  protected readonly registered = signal<SessionDetail | null>(null);

  constructor() {
    // A new site has other subjects and another clock: start those fields over.
    effect(() => {
      const zone = this.timeZone();
      this.selection.siteId();
      untracked(() => {
        this.form.controls.subjectCode.reset();
        if (zone) this.form.controls.testedAt.setValue(instantToZonedLocal(new Date(), zone));
      });
    });
  }

  protected fieldError(field: keyof RegistrationValue): string {
    return registrationFieldError(field, this.form.controls[field].errors);
  }

  protected subjectEnrolled(subject: Subject): void {
    this.subjects.update((list) => [...(list ?? []), subject]);
    this.form.controls.subjectCode.setValue(subject.code);
  }

  protected register(): void {
    this.form.markAllAsTouched();
    const studyId = this.selection.studyId();
    const site = this.selection.site();
    const body = site ? toRegisterSession(this.form.getRawValue(), site.timeZone) : null;
    if (this.form.invalid || !studyId || !site || !body) {
      this.submitProblem.set('Some fields need attention; each says what is missing.');
      this.focusFirstProblem();
      return;
    }
    this.submitProblem.set('');
    this.saving.set(true);
    this.api
      .registerSession(studyId, site.id, body)
      .pipe(takeUntilDestroyed(this.destroyRef))
      .subscribe({
        next: (session) => {
          this.saving.set(false);
          this.registered.set(session);
        },
        error: (error: unknown) => {
          this.saving.set(false);
          // ApiError: the server refused the registration and says why; anything else is unexpected.
          if (!(error instanceof ApiError)) throw error;
          this.submitProblem.set(error.message);
        },
      });
  }

  protected openSession(result: UploadResult): void {
    void this.router.navigate(['/site-desk', 'sessions', result.session.studyId, result.session.id]);
  }

  protected registerAnother(): void {
    this.registered.set(null);
    this.form.reset();
    const zone = this.timeZone();
    if (zone) this.form.controls.testedAt.setValue(instantToZonedLocal(new Date(), zone));
  }

  private focusFirstProblem(): void {
    // Runs after the error messages render, so the reader hears the field and its message.
    queueMicrotask(() => {
      const invalid = this.host.nativeElement.querySelector<HTMLElement>('[formcontrolname].ng-invalid');
      const target = invalid?.matches('input, mat-select') ? invalid : invalid?.querySelector<HTMLElement>('input');
      target?.focus();
    });
  }
}
