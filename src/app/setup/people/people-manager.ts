import { ChangeDetectionStrategy, Component, DestroyRef, computed, inject, viewChild } from '@angular/core';
import { takeUntilDestroyed, toSignal } from '@angular/core/rxjs-interop';
import { FormGroupDirective, NonNullableFormBuilder, ReactiveFormsModule, Validators, type AbstractControl } from '@angular/forms';
import { MatButton } from '@angular/material/button';
import { MatError, MatFormField, MatHint, MatLabel } from '@angular/material/form-field';
import { MatIcon } from '@angular/material/icon';
import { MatInput } from '@angular/material/input';
import { MatOption, MatSelect } from '@angular/material/select';
import type { Observable } from 'rxjs';

import { roleSchema, type Role } from '@shared/contracts/auth';
import type { AddPerson, Person } from '@shared/contracts/setup';
import type { Site } from '@shared/contracts/studies';
import { AuthSession } from '../../core/auth/auth-session';
import { ROLE_LABELS } from '../../core/auth/role-labels';
import { SetupApi } from '../setup-api';
import { ReasonPrompt } from '../study-editor/reason-dialog/reason-prompt';
import { fieldErrorText } from '../study-editor/server-field-errors';
import { SetupFormWrite } from '../study-editor/setup-form-write';
import { StudyEditorContext } from '../study-editor/study-editor-context';

/**
 * The People tab: who holds which role in the study (site coordinators per site), inviting a
 * person, removing a role, and deactivating an account.
 */
@Component({
  selector: 'app-people-manager',
  imports: [ReactiveFormsModule, MatButton, MatIcon, MatFormField, MatLabel, MatHint, MatError, MatInput, MatSelect, MatOption],
  templateUrl: './people-manager.html',
  styleUrl: './people-manager.scss',
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class PeopleManager {
  private readonly api = inject(SetupApi);
  private readonly prompt = inject(ReasonPrompt);
  private readonly destroyRef = inject(DestroyRef);
  private readonly context = inject(StudyEditorContext);
  /** Resetting through the directive also forgets the submission, so a cleared form shows no errors. */
  private readonly formDirective = viewChild.required(FormGroupDirective);
  private readonly session = inject(AuthSession);

  protected readonly people = this.api.peopleOf(() => this.context.studyId());
  protected readonly sites = this.api.sitesOf(() => this.context.studyId());
  protected readonly peopleList = computed<readonly Person[]>(() => (this.people.hasValue() ? this.people.value() : []));
  protected readonly siteList = computed<readonly Site[]>(() => (this.sites.hasValue() ? this.sites.value() : []));
  protected readonly myUserId = computed(() => this.session.user()?.id);

  protected readonly roleOptions = roleSchema.options.map((role) => ({ value: role, label: ROLE_LABELS[role] }));
  protected readonly form = inject(NonNullableFormBuilder).group({
    email: ['', [Validators.required, Validators.email, Validators.maxLength(200)]],
    name: ['', [Validators.required, Validators.maxLength(120)]],
    role: ['' as Role | '', Validators.required],
    siteIds: [[] as string[]],
  });
  private readonly chosenRole = toSignal(this.form.controls.role.valueChanges, { initialValue: '' as Role | '' });
  /** Whether the chosen role works per site (and so needs sites). */
  protected readonly needsSites = computed(() => this.chosenRole() === 'site-coordinator');

  private readonly formWrite = new SetupFormWrite(this.form);
  protected readonly saving = this.formWrite.saving;
  protected readonly problem = this.formWrite.problem;
  protected readonly saved = this.formWrite.saved;

  protected roleLabel(role: Role): string {
    return ROLE_LABELS[role];
  }

  /** `at sites 101, 102`: where a role applies, by site number. */
  protected scopeText(siteIds: readonly string[] | null): string {
    if (siteIds === null) return '';
    const numbers = siteIds.map((id) => this.siteList().find((site) => site.id === id)?.number ?? id);
    return `at site${numbers.length === 1 ? '' : 's'} ${numbers.join(', ')}`;
  }

  protected fieldError(control: AbstractControl, label: string): string {
    return fieldErrorText(control.errors, label);
  }

  protected invite(): void {
    this.form.markAllAsTouched();
    const studyId = this.context.studyId();
    const value = this.form.getRawValue();
    const siteIds = value.role === 'site-coordinator' ? value.siteIds : [];
    if (value.role === 'site-coordinator' && siteIds.length === 0) {
      this.form.controls.siteIds.setErrors({ server: 'A site coordinator needs at least one site of this study.' });
    }
    if (this.form.invalid || !studyId || !value.role) {
      this.problem.set('Some fields need attention; each says what is wrong.');
      return;
    }
    const body: AddPerson = { email: value.email.trim(), name: value.name.trim(), role: value.role, siteIds };
    this.write(
      (reason) => this.api.addPerson(studyId, { ...body, reason }),
      (person) => {
        this.saved.set(`${person.name} now holds the ${ROLE_LABELS[body.role].toLowerCase()} role; an invitation was e-mailed to ${person.email}.`);
        this.formDirective().resetForm();
      },
    );
  }

  protected removeRole(person: Person, role: Role): void {
    const studyId = this.context.studyId();
    if (!studyId) return;
    this.write(
      (reason) => this.api.removeRole(studyId, person.userId, role, reason),
      () => this.saved.set(`${person.name} no longer holds the ${ROLE_LABELS[role].toLowerCase()} role in this study.`),
    );
  }

  protected deactivate(person: Person): void {
    const studyId = this.context.studyId();
    if (!studyId) return;
    this.clearMessages();
    this.prompt
      .ask({
        title: `Deactivate ${person.name}`,
        message:
          `${person.email} will no longer be able to sign in, in any study, and their API tokens stop working. ` +
          'The account and everything it did stay in the audit trail.',
        confirmLabel: 'Deactivate',
      })
      .pipe(takeUntilDestroyed(this.destroyRef))
      .subscribe((reason) => {
        if (!reason) return;
        this.write(
          () => this.api.deactivate(studyId, person.userId, reason),
          (result) => this.saved.set(`${result.name}'s account is deactivated.`),
        );
      });
  }

  private write<T>(send: (reason: string | undefined) => Observable<T>, done: (result: T) => void): void {
    this.formWrite.send(send, (result) => {
      done(result);
      this.people.reload();
    });
  }

  private clearMessages(): void {
    this.formWrite.clear();
  }
}
