import { afterEach, beforeEach, describe, expect, it } from '@jest/globals';
import { provideHttpClient, withInterceptors } from '@angular/common/http';
import { HttpTestingController, provideHttpClientTesting } from '@angular/common/http/testing';
import { TestBed, type ComponentFixture } from '@angular/core/testing';

import type { ReferenceSet, ReferenceSetValidation } from '@shared/contracts/reference-sets';
import { errorInterceptor } from '../../../core/http/error-interceptor';
import { ReferenceSetImport } from './reference-set-import';

// Fictional import; the problem texts are the server's wording for a damaged workbook.
const PROBLEMS = [
  'lookup.xlsx, sheet "Male FEV1": ages 15-15.75 y are missing; the table must run from 3 y to 95 y in steps of 0.25 y with none missing.',
  'lookup.xlsx, sheet "Male FVC", row 10, column S Spline holds "n/a"; a number is expected.',
];
const VALIDATION: ReferenceSetValidation = { equationsId: 'gli-global-2022', summary: 'Refused: 2 problems', checks: [], spotChecks: [], problems: PROBLEMS };
const IMPORTED: ReferenceSet = {
  id: 'set-1',
  equationsId: 'gli-global-2022',
  label: 'GLI Global 2022: lookup.xlsx',
  originalName: 'lookup.xlsx',
  sha256: 'a'.repeat(64),
  sizeBytes: 115_298,
  importedBy: { userId: 'user-admin', name: 'Odile Marchetti' },
  importedAt: '2026-01-10T09:00:00.000Z',
  validationSummary: '26 of 26 layout checks passed; 8 of 8 spot checks agree',
};

describe('ReferenceSetImport', () => {
  let fixture: ComponentFixture<ReferenceSetImport>;
  let backend: HttpTestingController;
  const element = () => fixture.nativeElement as HTMLElement;

  beforeEach(async () => {
    TestBed.configureTestingModule({ providers: [provideHttpClient(withInterceptors([errorInterceptor])), provideHttpClientTesting()] });
    backend = TestBed.inject(HttpTestingController);
    fixture = TestBed.createComponent(ReferenceSetImport);
    await fixture.whenStable();
  });

  afterEach(() => backend.verify());

  /** Picks a file as the browser would (jsdom cannot fill a FileList itself). */
  async function chooseAndSubmit(file: File): Promise<void> {
    const input = element().querySelector<HTMLInputElement>('input[type="file"]')!;
    Object.defineProperty(input, 'files', { value: { length: 1, item: () => file } });
    input.dispatchEvent(new Event('change'));
    await fixture.whenStable();
    element().querySelector<HTMLButtonElement>('button[type="submit"]')!.click();
    TestBed.tick();
  }

  it('asks for an .xlsx for GLI Global and keeps Import disabled until a file is chosen', () => {
    expect(element().querySelector<HTMLInputElement>('input[type="file"]')!.accept).toBe('.xlsx');
    expect(element().querySelector<HTMLButtonElement>('button[type="submit"]')!.disabled).toBe(true);
    expect(element().textContent).toContain('Male FEV1');
  });

  it('sends the file with the equations, and lists every problem of a refused file', async () => {
    await chooseAndSubmit(new File(['not really a workbook'], 'lookup.xlsx'));
    const request = backend.expectOne('/api/reference-sets');
    const body = request.request.body as FormData;
    expect(body.get('equationsId')).toBe('gli-global-2022');
    expect((body.get('file') as File).name).toBe('lookup.xlsx');
    request.flush(
      { error: { code: 'reference-set-invalid', message: 'lookup.xlsx cannot be used as GLI Global 2022 tables: 2 problems. Nothing was kept.', details: { problems: PROBLEMS, validation: VALIDATION } } },
      { status: 422, statusText: 'Unprocessable Entity' },
    );
    await fixture.whenStable();
    const items = Array.from(element().querySelectorAll('.problems li')).map((item) => item.textContent?.trim());
    expect(items).toEqual(PROBLEMS);
    expect(element().querySelector('.outcome-text')?.textContent).toContain('Nothing was kept');
  });

  it('says what was imported and tells the page', async () => {
    let emitted: ReferenceSet | undefined;
    fixture.componentInstance.imported.subscribe((set) => (emitted = set));
    await chooseAndSubmit(new File(['workbook'], 'lookup.xlsx'));
    backend.expectOne('/api/reference-sets').flush(IMPORTED);
    await fixture.whenStable();
    expect(emitted).toEqual(IMPORTED);
    expect(element().querySelector('.outcome-text')?.textContent).toContain('8 of 8 spot checks agree');
  });

  it("shows the server's words for a duplicate", async () => {
    await chooseAndSubmit(new File(['workbook'], 'lookup.xlsx'));
    backend
      .expectOne('/api/reference-sets')
      .flush(
        { error: { code: 'duplicate-reference-set', message: 'This file was already imported as "GLI Global 2022: lookup.xlsx".' } },
        { status: 409, statusText: 'Conflict' },
      );
    await fixture.whenStable();
    expect(element().querySelector('.outcome-text')?.textContent).toContain('already imported');
    expect(element().querySelectorAll('.problems li')).toHaveLength(0);
  });
});
