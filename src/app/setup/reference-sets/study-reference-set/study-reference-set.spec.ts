import { afterEach, describe, expect, it } from '@jest/globals';
import { provideHttpClient, withInterceptors } from '@angular/common/http';
import { HttpTestingController, provideHttpClientTesting } from '@angular/common/http/testing';
import { TestBed, type ComponentFixture } from '@angular/core/testing';

import type { ReferenceSet, StudyReferenceSet as StudyPin } from '@shared/contracts/reference-sets';
import { errorInterceptor } from '../../../core/http/error-interceptor';
import { StudyReferenceSetPin } from './study-reference-set';

const PIN_URL = '/api/studies/study-1/reference-set';
// Fictional imported set.
const SET: ReferenceSet = {
  id: 'set-1',
  equationsId: 'gli-global-2022',
  label: 'Publisher workbook',
  originalName: 'lookup.xlsx',
  sha256: 'b'.repeat(64),
  sizeBytes: 115_298,
  importedBy: { userId: 'user-admin', name: 'Odile Marchetti' },
  importedAt: '2026-01-10T09:00:00.000Z',
  validationSummary: '26 of 26 layout checks passed; 8 of 8 spot checks agree',
};

describe('StudyReferenceSetPin', () => {
  let fixture: ComponentFixture<StudyReferenceSetPin>;
  let backend: HttpTestingController;
  const element = () => fixture.nativeElement as HTMLElement;
  const saveButton = () => element().querySelector<HTMLButtonElement>('.actions button')!;

  async function start(pin: StudyPin): Promise<void> {
    TestBed.configureTestingModule({ providers: [provideHttpClient(withInterceptors([errorInterceptor])), provideHttpClientTesting()] });
    backend = TestBed.inject(HttpTestingController);
    fixture = TestBed.createComponent(StudyReferenceSetPin);
    fixture.componentRef.setInput('studyId', 'study-1');
    fixture.componentRef.setInput('studyCode', 'HLX-201');
    fixture.componentRef.setInput('referenceSets', [SET]);
    TestBed.tick();
    backend.expectOne(PIN_URL).flush(pin);
    await fixture.whenStable();
  }

  async function chooseSet(label: string): Promise<void> {
    element().querySelector<HTMLElement>('mat-select .mat-mdc-select-trigger')!.click();
    TestBed.tick();
    Array.from(document.querySelectorAll<HTMLElement>('mat-option'))
      .find((option) => option.textContent?.includes(label))!
      .click();
    await fixture.whenStable();
  }

  afterEach(() => backend.verify());

  it('says in words that predicted values are unavailable when the study names tables nobody pinned', async () => {
    await start({ studyId: 'study-1', equationsId: 'gli-2012', referenceSetId: null, reasonRequired: false });
    expect(element().querySelector('.now')?.textContent).toMatch(/set to GLI-2012, but no imported tables are pinned/);
  });

  it('pins a set without a reason while the study has no sessions', async () => {
    await start({ studyId: 'study-1', equationsId: 'ecsc-1993', referenceSetId: null, reasonRequired: false });
    expect(saveButton().disabled).toBe(true);
    await chooseSet('Publisher workbook');
    expect(element().querySelector('textarea')).toBeNull();
    saveButton().click();
    const request = backend.expectOne(PIN_URL);
    expect(request.request.method).toBe('PUT');
    expect(request.request.body).toEqual({ referenceSetId: 'set-1' });
    request.flush({ studyId: 'study-1', equationsId: 'gli-global-2022', referenceSetId: 'set-1', reasonRequired: false });
    await fixture.whenStable();
    expect(element().querySelector('.now')?.textContent).toContain('GLI Global 2022 from “Publisher workbook”');
  });

  it('asks for a reason before sending once the study has sessions', async () => {
    await start({ studyId: 'study-1', equationsId: 'gli-global-2022', referenceSetId: 'set-1', reasonRequired: true });
    await chooseSet('None: built-in');
    const reason = element().querySelector<HTMLTextAreaElement>('textarea')!;
    expect(saveButton().disabled).toBe(true);
    reason.value = 'Sponsor memo 14';
    reason.dispatchEvent(new Event('input'));
    await fixture.whenStable();
    saveButton().click();
    const request = backend.expectOne(PIN_URL);
    expect(request.request.body).toEqual({ referenceSetId: null, reason: 'Sponsor memo 14' });
    request.flush({ studyId: 'study-1', equationsId: 'ecsc-1993', referenceSetId: null, reasonRequired: true });
    await fixture.whenStable();
    expect(element().querySelector('.outcome')?.textContent?.trim()).toBe('Saved.');
  });
});
