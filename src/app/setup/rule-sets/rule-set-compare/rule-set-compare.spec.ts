import { afterEach, beforeEach, describe, expect, it } from '@jest/globals';
import { provideHttpClient, withInterceptors } from '@angular/common/http';
import { HttpTestingController, provideHttpClientTesting } from '@angular/common/http/testing';
import { TestBed, type ComponentFixture } from '@angular/core/testing';
import { provideRouter } from '@angular/router';

import type { RuleSetComparison, RuleSetRule } from '@shared/contracts/protocols';
import { errorInterceptor } from '../../../core/http/error-interceptor';
import { RuleSetComparePage } from './rule-set-compare';

const rule = (changes: Partial<RuleSetRule>): RuleSetRule => ({
  id: 'study.min-grade-for-endpoint',
  description: 'Worst grade whose reported value may serve as a study endpoint.',
  value: 'E',
  unit: '',
  source: 'common practice',
  status: 'common-practice',
  ...changes,
});

// The two study tightening rules of protocols/ats-ers-2019-endpoint-strict.v1.json against ats-ers-2019.v1.json.
const COMPARISON: RuleSetComparison = {
  from: { id: 'ats-ers-2019', version: 1, title: 'ATS/ERS 2019' },
  to: { id: 'ats-ers-2019-endpoint-strict', version: 1, title: 'ATS/ERS 2019 with endpoint tightening' },
  added: [],
  removed: [],
  changed: [
    {
      ruleId: 'study.min-grade-for-endpoint',
      changedFields: ['value', 'source'],
      from: rule({}),
      to: rule({ value: 'B', source: 'study protocol choice' }),
    },
    {
      ruleId: 'bev.max-volume',
      changedFields: ['status'],
      from: rule({ id: 'bev.max-volume', value: 0.1, unit: 'L', status: 'from-memory' }),
      to: rule({ id: 'bev.max-volume', value: 0.1, unit: 'L', status: 'verified' }),
    },
  ],
  unchangedCount: 78,
};

describe('RuleSetComparePage', () => {
  let fixture: ComponentFixture<RuleSetComparePage>;
  let backend: HttpTestingController;

  beforeEach(async () => {
    TestBed.configureTestingModule({
      providers: [provideRouter([]), provideHttpClient(withInterceptors([errorInterceptor])), provideHttpClientTesting()],
    });
    backend = TestBed.inject(HttpTestingController);
    fixture = TestBed.createComponent(RuleSetComparePage);
    fixture.componentRef.setInput('from', 'ats-ers-2019@1');
    fixture.componentRef.setInput('to', 'ats-ers-2019-endpoint-strict@1');
    TestBed.tick();
    backend.expectOne('/api/protocols').flush([]);
    const request = backend.expectOne((candidate) => candidate.url === '/api/protocols/compare');
    expect(request.request.params.get('from')).toBe('ats-ers-2019@1');
    expect(request.request.params.get('to')).toBe('ats-ers-2019-endpoint-strict@1');
    request.flush(COMPARISON);
    await fixture.whenStable();
  });

  afterEach(() => backend.verify());

  it('sums up and lists each changed rule with old and new value, source and status', () => {
    const element = fixture.nativeElement as HTMLElement;
    expect(element.querySelector('[role="status"]')?.textContent?.replace(/\s+/g, ' ').trim()).toBe(
      '2 changed, 0 added, 0 removed; 78 rules the same.',
    );
    const rows = Array.from(element.querySelectorAll('tr.mat-mdc-row')).map((row) => row.textContent?.replace(/\s+/g, ' ').trim() ?? '');
    expect(rows[0]).toContain('E → B');
    expect(rows[0]).toContain('common practice');
    expect(rows[0]).toContain('study protocol choice');
    expect(rows[1]).toContain('0.1 L');
    expect(rows[1]).toMatch(/From memory.*Verified/);
  });
});
