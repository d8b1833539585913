/**
 * Study setup through the real app: a study admin creates a study, sets it up (settings, visit
 * schedule, sites, people) and every bad input is refused with a message naming the problem.
 * A real SQLite file, the identity provider and the SMTP catcher on loopback; all data fictional.
 */
import { afterAll, beforeAll, describe, expect, it } from '@jest/globals';
import type { Schedule } from '../../shared/contracts/sessions.js';
import type { Person, StudySetup } from '../../shared/contracts/setup.js';
import type { Site } from '../../shared/contracts/studies.js';
import { DEMO_STUDY } from '../../server/seed/demo-study.js';
import { signIn, startTidemarkForTest, type CookieClient } from '../support/tidemark-under-test.js';

type Running = Awaited<ReturnType<typeof startTidemarkForTest>>;
type Caller = { client: CookieClient; csrfToken: string };
type ErrorBody = { error: { code: string; message: string; details?: unknown } };

let tidemark: Running;
let admin: Caller;
let coordinator: Caller;
let monitor: Caller;
let reader: Caller;
/** The study created by the admin at the start; most tests work in it. */
let study: StudySetup;

const SCHEDULE = {
  visits: [
    { code: 'SCR', name: 'Screening', dayOffset: -14, windowBeforeDays: 7, windowAfterDays: 7 },
    { code: 'D1', name: 'Day 1', dayOffset: 1, windowBeforeDays: 0, windowAfterDays: 0 },
    { code: 'W4', name: 'Week 4', dayOffset: 29, windowBeforeDays: 3, windowAfterDays: 3 },
  ],
  timepoints: [
    { code: 'PRE', name: 'Pre-dose' },
    { code: 'POST', name: 'Post-bronchodilator' },
  ],
};

async function call<T = unknown>(caller: Caller, method: string, path: string, body?: unknown): Promise<{ status: number; body: T }> {
  const response = await caller.client.fetch(`${tidemark.url}${path}`, {
    method,
    headers: { 'content-type': 'application/json', 'x-csrf-token': caller.csrfToken },
    body: body === undefined ? undefined : JSON.stringify(body),
  });
  const text = await response.text();
  return { status: response.status, body: (text ? JSON.parse(text) : undefined) as T };
}

const studyPath = (rest = '') => `/api/studies/${study.id}${rest}`;

function auditRows(entity: string, studyId = study.id) {
  return tidemark.deps.db.$client
    .prepare('select action, old_value as oldValue, new_value as newValue, reason, user_id as userId, role from audit_events where study_id = ? and entity = ? order by sequence')
    .all(studyId, entity) as { action: string; oldValue: string | null; newValue: string | null; reason: string | null; userId: string; role: string }[];
}

function settingsBody(overrides: Record<string, unknown> = {}) {
  return {
    code: study.code,
    title: study.title,
    sponsor: study.sponsor,
    indication: study.indication,
    protocolRuleSetId: study.protocolRuleSetId,
    protocolVersion: study.protocolVersion,
    readDesign: study.readDesign,
    dualSampleFraction: study.dualSampleFraction,
    blinding: study.blinding,
    turnaroundHours: study.turnaroundHours,
    ...overrides,
  };
}

beforeAll(async () => {
  tidemark = await startTidemarkForTest();
  [admin, coordinator, monitor, reader] = await Promise.all([
    signIn(tidemark.url, 'admin@tidemark.example'),
    signIn(tidemark.url, 'coordinator.101@tidemark.example'),
    signIn(tidemark.url, 'monitor@tidemark.example'),
    signIn(tidemark.url, 'reader.one@tidemark.example'),
  ]);
  const created = await call<StudySetup>(admin, 'POST', '/api/studies', {
    code: 'TDM-900',
    title: 'Fictional phase III trial of inhaled corvanide in asthma',
    sponsor: 'Sandpiper Biologics (fictional)',
    indication: 'Moderate to severe asthma',
  });
  expect(created.status).toBe(201);
  study = created.body;
});

afterAll(async () => {
  await tidemark?.close();
});

describe('creating a study', () => {
  it('makes the creator its study admin, with the default rule set and audit rows', async () => {
    expect(study).toMatchObject({ code: 'TDM-900', protocolRuleSetId: 'ats-ers-2019', protocolVersion: null, readDesign: 'single', sessionCount: 0 });
    expect(study.protocolChoices.map((choice) => choice.id)).toContain('ats-ers-2019');
    const me = await call<{ assignments: { studyId: string; role: string }[] }>(admin, 'GET', '/api/me');
    expect(me.body.assignments).toContainEqual(expect.objectContaining({ studyId: study.id, role: 'study-admin' }));
    expect(auditRows('study').map((row) => row.action)).toEqual(['create']);
    expect(auditRows('role-assignment')[0]).toMatchObject({ action: 'assign', userId: 'user-admin', role: 'study-admin' });
  });

  it.each([
    ['an existing code', 'HLX-201'],
    ['an existing code in other letter case', 'hlx-201'],
  ])('refuses %s with 409 naming it', async (_label, code) => {
    const response = await call<ErrorBody>(admin, 'POST', '/api/studies', { code, title: 'T', sponsor: 'S', indication: 'I' });
    expect(response.status).toBe(409);
    expect(response.body.error.code).toBe('study-code-taken');
    expect(response.body.error.message).toContain(code);
  });

  it.each([
    ['a missing title', { code: 'NEW-1', sponsor: 'S', indication: 'I' }, /title/],
    ['a code with spaces', { code: 'NEW 1', title: 'T', sponsor: 'S', indication: 'I' }, /code/],
    ['an unknown rule set', { code: 'NEW-1', title: 'T', sponsor: 'S', indication: 'I', protocolRuleSetId: 'no-such-set' }, /no-such-set/],
  ])('refuses %s', async (_label, body, pattern) => {
    const response = await call<ErrorBody>(admin, 'POST', '/api/studies', body);
    expect([400, 422]).toContain(response.status);
    expect(response.body.error.message).toMatch(pattern);
  });

  it('is refused to users who are study admin nowhere', async () => {
    const response = await call<ErrorBody>(coordinator, 'POST', '/api/studies', { code: 'NEW-2', title: 'T', sponsor: 'S', indication: 'I' });
    expect(response.status).toBe(403);
    expect(response.body.error.message).toMatch(/study admin/);
  });
});

describe('study settings', () => {
  it('are read by monitors but not by over-readers, and changed by admins only', async () => {
    expect((await call(monitor, 'GET', `/api/studies/${DEMO_STUDY.id}/setup`)).status).toBe(200);
    expect((await call(reader, 'GET', `/api/studies/${DEMO_STUDY.id}/setup`)).status).toBe(403);
    const monitorPut = await call(monitor, 'PUT', `/api/studies/${DEMO_STUDY.id}/setup`, settingsBody({ code: DEMO_STUDY.code }));
    expect(monitorPut.status).toBe(403);
  });

  it('change, pinning a rule-set version, with only the changed fields audited old → new', async () => {
    const response = await call<StudySetup>(
      admin,
      'PUT',
      studyPath('/setup'),
      settingsBody({
        protocolVersion: 1,
        readDesign: 'dual-sample',
        dualSampleFraction: 0.2,
        blinding: { readersSeeVisit: false, readersSeeTimepoint: true, readersSeeBronchodilator: true, monitorsBlinded: true },
        turnaroundHours: 72,
      }),
    );
    expect(response.status).toBe(200);
    expect(response.body).toMatchObject({ protocolVersion: 1, readDesign: 'dual-sample', dualSampleFraction: 0.2, turnaroundHours: 72 });
    expect(response.body.blinding.readersSeeVisit).toBe(false);
    study = response.body;
    const update = auditRows('study').at(-1)!;
    expect(update.action).toBe('update');
    expect(JSON.parse(update.oldValue!)).toEqual({
      protocolVersion: null,
      readDesign: 'single',
      dualSampleFraction: 0,
      blinding: { readersSeeVisit: true, readersSeeTimepoint: true, readersSeeBronchodilator: true, monitorsBlinded: true },
      turnaroundHours: 48,
    });
    expect(JSON.parse(update.newValue!)).toMatchObject({ protocolVersion: 1, readDesign: 'dual-sample', turnaroundHours: 72 });
  });

  it('writes nothing when nothing changed', async () => {
    const before = auditRows('study').length;
    expect((await call(admin, 'PUT', studyPath('/setup'), settingsBody())).status).toBe(200);
    expect(auditRows('study')).toHaveLength(before);
  });

  it.each<[string, Record<string, unknown>, number, string, RegExp]>([
    ['dual-sample without a fraction', { readDesign: 'dual-sample', dualSampleFraction: null }, 400, 'invalid-input', /dualSampleFraction/],
    ['dual-sample with fraction 0', { readDesign: 'dual-sample', dualSampleFraction: 0 }, 400, 'invalid-input', /dualSampleFraction/],
    ['a fraction above 1', { readDesign: 'dual-sample', dualSampleFraction: 1.5 }, 400, 'invalid-input', /between 0 and 1/],
    ['a turnaround of 0 hours', { turnaroundHours: 0 }, 400, 'invalid-input', /turnaroundHours: the turnaround is at least 1 hour/],
    ['a turnaround of 721 hours', { turnaroundHours: 721 }, 400, 'invalid-input', /at most 720 hours/],
    ['an unknown read design', { readDesign: 'triple' }, 400, 'invalid-input', /readDesign/],
    ['blinding without monitorsBlinded', { blinding: { readersSeeVisit: true, readersSeeTimepoint: true, readersSeeBronchodilator: true } }, 400, 'invalid-input', /blinding.monitorsBlinded/],
    ['an unknown rule set', { protocolRuleSetId: 'no-such-set' }, 422, 'protocol-unknown', /no-such-set/],
    ['a version the rule set does not have', { protocolVersion: 9 }, 422, 'protocol-unknown', /has no version 9/],
    ['the code of another study', { code: 'HLX-201' }, 409, 'study-code-taken', /HLX-201/],
  ])('refuse %s', async (_label, overrides, status, code, pattern) => {
    const response = await call<ErrorBody>(admin, 'PUT', studyPath('/setup'), settingsBody(overrides));
    expect(response.status).toBe(status);
    expect(response.body.error.code).toBe(code);
    expect(response.body.error.message).toMatch(pattern);
  });
});

describe('the visit schedule', () => {
  it('is set, then changed keeping the ids of unchanged codes', async () => {
    const first = await call<Schedule>(admin, 'PUT', studyPath('/schedule'), SCHEDULE);
    expect(first.status).toBe(200);
    expect(first.body).toEqual(SCHEDULE);
    const idsBefore = visitIds();

    const changed = {
      visits: [...SCHEDULE.visits.slice(0, 2), { ...SCHEDULE.visits[2], name: 'Week 4 (renamed)' }, { code: 'W12', name: 'Week 12', dayOffset: 85, windowBeforeDays: 5, windowAfterDays: 5 }],
      timepoints: SCHEDULE.timepoints,
    };
    const second = await call<Schedule>(admin, 'PUT', studyPath('/schedule'), changed);
    expect(second.status).toBe(200);
    const idsAfter = visitIds();
    for (const code of ['SCR', 'D1', 'W4']) expect(idsAfter.get(code)).toBe(idsBefore.get(code));
    expect(idsAfter.has('W12')).toBe(true);

    const audit = auditRows('schedule').at(-1)!;
    expect(JSON.parse(audit.oldValue!)).toEqual(SCHEDULE);
    expect(JSON.parse(audit.newValue!)).toEqual(changed);
    // Back to the plain schedule for the tests that follow.
    expect((await call(admin, 'PUT', studyPath('/schedule'), SCHEDULE)).status).toBe(200);
  });

  it('refuses overlapping windows, naming both visits and the shared days', async () => {
    const overlapping = {
      ...SCHEDULE,
      visits: [...SCHEDULE.visits, { code: 'W5', name: 'Week 5', dayOffset: 33, windowBeforeDays: 3, windowAfterDays: 3 }],
    };
    const response = await call<ErrorBody>(admin, 'PUT', studyPath('/schedule'), overlapping);
    expect(response.status).toBe(422);
    expect(response.body.error.code).toBe('visit-windows-overlap');
    expect(response.body.error.message).toContain('Visits W4 (Week 4, days 26 to 32) and W5 (Week 5, days 30 to 36) overlap on days 30 to 32');
    expect(response.body.error.details).toEqual({ overlaps: [{ first: 'W4', second: 'W5', fromDay: 30, toDay: 32 }] });
  });

  it.each<[string, unknown, number, string, RegExp]>([
    ['a duplicate visit code', { ...SCHEDULE, visits: [...SCHEDULE.visits, { ...SCHEDULE.visits[0], code: 'scr', dayOffset: 200 }] }, 422, 'duplicate-code', /visit code SCR is used in rows 1 and 4/],
    ['a duplicate timepoint code', { ...SCHEDULE, timepoints: [...SCHEDULE.timepoints, { code: 'PRE', name: 'Again' }] }, 422, 'duplicate-code', /timepoint code PRE is used in rows 1 and 3/],
    ['a negative window', { ...SCHEDULE, visits: [{ ...SCHEDULE.visits[0], windowBeforeDays: -1 }] }, 400, 'invalid-input', /visits\.0\.windowBeforeDays: a window cannot be negative/],
    ['a fractional planned day', { ...SCHEDULE, visits: [{ ...SCHEDULE.visits[0], dayOffset: 1.5 }] }, 400, 'invalid-input', /visits\.0\.dayOffset/],
    ['a visit without a name', { ...SCHEDULE, visits: [{ ...SCHEDULE.visits[0], name: ' ' }] }, 400, 'invalid-input', /visits\.0\.name: give the visit name/],
  ])('refuses %s', async (_label, body, status, code, pattern) => {
    const response = await call<ErrorBody>(admin, 'PUT', studyPath('/schedule'), body);
    expect(response.status).toBe(status);
    expect(response.body.error.code).toBe(code);
    expect(response.body.error.message).toMatch(pattern);
  });
});

function visitIds(): Map<string, string> {
  const rows = tidemark.deps.db.$client.prepare('select code, id from visits where study_id = ?').all(study.id) as { code: string; id: string }[];
  return new Map(rows.map((row) => [row.code, row.id]));
}

describe('sites', () => {
  let site: Site;

  it('are added with the country in capitals, then changed', async () => {
    const added = await call<Site>(admin, 'POST', studyPath('/sites'), { number: '501', name: 'Harbourlight Chest Clinic', countryCode: 'no', timeZone: 'Europe/Oslo' });
    expect(added.status).toBe(201);
    expect(added.body).toMatchObject({ number: '501', countryCode: 'NO', timeZone: 'Europe/Oslo', studyId: study.id });
    site = added.body;
    const changed = await call<Site>(admin, 'PUT', studyPath(`/sites/${site.id}`), { number: '501', name: 'Harbourlight Chest Clinic', countryCode: 'NO', timeZone: 'Europe/Oslo' });
    expect(changed.status).toBe(200);
    const moved = await call<Site>(admin, 'PUT', studyPath(`/sites/${site.id}`), { number: '501', name: 'Harbourlight Lung Unit', countryCode: 'NO', timeZone: 'Europe/Oslo' });
    expect(moved.body.name).toBe('Harbourlight Lung Unit');
    const audit = auditRows('site');
    expect(audit.map((row) => row.action)).toEqual(['create', 'update']);
    expect(JSON.parse(audit[1].oldValue!)).toEqual({ name: 'Harbourlight Chest Clinic' });
    const list = await call<Site[]>(admin, 'GET', studyPath('/sites'));
    expect(list.body.map((s) => s.number)).toEqual(['501']);
  });

  it.each<[string, Record<string, unknown>, number, string, RegExp]>([
    ['a number already used', { number: '501' }, 409, 'site-number-taken', /501/],
    ['a three-letter country', { countryCode: 'NOR' }, 400, 'invalid-input', /countryCode/],
    ['an unknown country', { countryCode: 'XQ' }, 422, 'country-unknown', /XQ/],
    ['an unknown time zone', { timeZone: 'Europe/Olso' }, 422, 'time-zone-unknown', /Europe\/Olso/],
    ['a zone in the wrong case, suggesting the right one', { timeZone: 'europe/madrid' }, 422, 'time-zone-unknown', /Did you mean Europe\/Madrid\?/],
    ['a missing name', { name: '' }, 400, 'invalid-input', /name: give the site name/],
  ])('refuse %s', async (_label, overrides, status, code, pattern) => {
    const body = { number: '502', name: 'Saltmarsh Respiratory Centre', countryCode: 'ES', timeZone: 'Europe/Madrid', ...overrides };
    const response = await call<ErrorBody>(admin, 'POST', studyPath('/sites'), body);
    expect(response.status).toBe(status);
    expect(response.body.error.code).toBe(code);
    expect(response.body.error.message).toMatch(pattern);
  });

  it('are removed when they hold nothing, taking their coordinator assignments along', async () => {
    const extra = await call<Site>(admin, 'POST', studyPath('/sites'), { number: '599', name: 'Temporary Site', countryCode: 'CA', timeZone: 'America/Toronto' });
    const person = await call<Person>(admin, 'POST', studyPath('/people'), {
      email: 'temp.coordinator@tidemark.example',
      name: 'Temp Coordinator',
      role: 'site-coordinator',
      siteIds: [extra.body.id],
    });
    expect(person.status).toBe(201);
    const removed = await call(admin, 'DELETE', studyPath(`/sites/${extra.body.id}`));
    expect(removed.status).toBe(204);
    expect((await call(admin, 'GET', studyPath(`/sites/${extra.body.id}`))).status).toBe(404);
    const people = await call<Person[]>(admin, 'GET', studyPath('/people'));
    expect(people.body.find((p) => p.email === 'temp.coordinator@tidemark.example')).toBeUndefined();
    expect(auditRows('site').at(-1)!.action).toBe('remove');
  });

  it('are changed by study admins only', async () => {
    const response = await call(monitor, 'POST', `/api/studies/${DEMO_STUDY.id}/sites`, { number: '999', name: 'X', countryCode: 'NO', timeZone: 'Europe/Oslo' });
    expect(response.status).toBe(403);
  });

  it('cannot be removed from another study through this one', async () => {
    const response = await call<ErrorBody>(admin, 'DELETE', studyPath('/sites/site-101'));
    expect(response.status).toBe(404);
  });
});

describe('people', () => {
  let site: Site;
  let invited: Person;

  beforeAll(async () => {
    site = (await call<Site[]>(admin, 'GET', studyPath('/sites'))).body[0];
  });

  it('are invited: a new account, its role at a site, and an e-mail', async () => {
    const response = await call<Person>(admin, 'POST', studyPath('/people'), {
      email: 'Wren.Aldous@Tidemark.example',
      name: 'Wren Aldous',
      role: 'site-coordinator',
      siteIds: [site.id],
    });
    expect(response.status).toBe(201);
    invited = response.body;
    expect(invited).toMatchObject({ email: 'wren.aldous@tidemark.example', name: 'Wren Aldous', active: true, roles: [{ role: 'site-coordinator', siteIds: [site.id] }] });
    await tidemark.services.messages.settle();
    const messages = tidemark.services.messages.messagesOf(invited.userId);
    expect(messages[0]).toMatchObject({ subject: 'Tidemark: you are site coordinator in study TDM-900', delivery: 'sent' });
    expect(messages[0].body).toContain('Odile Marchetti gave you the site coordinator role');
    expect(messages[0].body).toContain('site 501');
    expect(tidemark.fakes.mail!.messages.some((raw) => raw.includes('wren.aldous@tidemark.example'))).toBe(true);
    expect(auditRows('user').map((row) => row.action)).toContain('create');
  });

  it('lists everyone with roles and site scope', async () => {
    const list = await call<Person[]>(monitor, 'GET', `/api/studies/${DEMO_STUDY.id}/people`);
    expect(list.status).toBe(200);
    const coordinator201 = list.body.find((p) => p.email === 'coordinator.201@tidemark.example')!;
    expect(coordinator201.roles).toEqual([{ role: 'site-coordinator', siteIds: expect.arrayContaining(['site-201', 'site-301']) }]);
    const adjudicator = list.body.find((p) => p.email === 'adjudicator@tidemark.example')!;
    expect(adjudicator.roles.map((r) => r.role).sort()).toEqual(['adjudicator', 'over-reader']);
    expect((await call(reader, 'GET', `/api/studies/${DEMO_STUDY.id}/people`)).status).toBe(403);
  });

  it('gives an existing account a further role without creating another', async () => {
    const response = await call<Person>(admin, 'POST', studyPath('/people'), { email: 'monitor@tidemark.example', name: 'ignored', role: 'monitor' });
    expect(response.status).toBe(201);
    expect(response.body).toMatchObject({ userId: 'user-monitor', name: 'Jonas Feldkirch', roles: [{ role: 'monitor', siteIds: null }] });
  });

  it.each<[string, () => Record<string, unknown>, number, string, RegExp]>([
    ['a coordinator without sites', () => ({ role: 'site-coordinator' }), 400, 'invalid-input', /siteIds: a site coordinator needs at least one site/],
    ['a data manager with sites', () => ({ role: 'data-manager', siteIds: [site.id] }), 400, 'invalid-input', /only site coordinators are limited to sites/],
    ['a site of another study', () => ({ role: 'site-coordinator', siteIds: ['site-101'] }), 422, 'site-outside-study', /site 101 belongs to study HLX-201/],
    ['a site that does not exist', () => ({ role: 'site-coordinator', siteIds: ['site-nowhere'] }), 422, 'site-outside-study', /no site site-nowhere/],
    ['an unknown role', () => ({ role: 'sponsor' }), 400, 'invalid-input', /role/],
    ['a bad e-mail address', () => ({ email: 'not-an-address', role: 'monitor' }), 400, 'invalid-input', /valid e-mail/],
    ['a duplicate coordinator site', () => ({ email: 'wren.aldous@tidemark.example', role: 'site-coordinator', siteIds: [site.id] }), 409, 'role-exists', /already site coordinator at site 501/],
    ['a duplicate study-wide role', () => ({ email: 'monitor@tidemark.example', role: 'monitor' }), 409, 'role-exists', /already holds the monitor role in TDM-900/],
  ])('refuse %s', async (_label, overrides, status, code, pattern) => {
    const body = { email: 'someone.new@tidemark.example', name: 'Someone New', role: 'monitor', ...overrides() };
    const response = await call<ErrorBody>(admin, 'POST', studyPath('/people'), body);
    expect(response.status).toBe(status);
    expect(response.body.error.code).toBe(code);
    expect(response.body.error.message).toMatch(pattern);
  });

  it('lose a role, audited', async () => {
    const added = await call<Person>(admin, 'POST', studyPath('/people'), { email: 'data.manager@tidemark.example', name: 'x', role: 'data-manager' });
    expect(added.status).toBe(201);
    const removed = await call(admin, 'DELETE', studyPath('/people/user-data-manager/roles/data-manager'));
    expect(removed.status).toBe(204);
    const people = await call<Person[]>(admin, 'GET', studyPath('/people'));
    expect(people.body.find((p) => p.userId === 'user-data-manager')).toBeUndefined();
    expect(auditRows('role-assignment').at(-1)).toMatchObject({ action: 'remove' });
    expect((await call<ErrorBody>(admin, 'DELETE', studyPath('/people/user-data-manager/roles/data-manager'))).status).toBe(404);
  });

  it('keep at least one active study admin', async () => {
    const removeOwn = await call<ErrorBody>(admin, 'DELETE', studyPath('/people/user-admin/roles/study-admin'));
    expect(removeOwn.status).toBe(409);
    expect(removeOwn.body.error.code).toBe('last-study-admin');
    const deactivateSelf = await call<ErrorBody>(admin, 'POST', studyPath('/people/user-admin/deactivate'), { reason: 'testing' });
    expect(deactivateSelf.status).toBe(409);
    expect(deactivateSelf.body.error.code).toBe('cannot-deactivate-self');
  });

  it('are deactivated with a reason: kept in the list, their session and API token refused from then on', async () => {
    const readerTwo = await signIn(tidemark.url, 'reader.two@tidemark.example');
    const token = await call<{ token: string }>(readerTwo, 'POST', '/api/me/tokens', { label: 'reading export' });
    expect(token.status).toBe(201);
    expect((await call(admin, 'POST', studyPath('/people'), { email: 'reader.two@tidemark.example', name: 'x', role: 'over-reader' })).status).toBe(201);

    const noReason = await call<ErrorBody>(admin, 'POST', studyPath('/people/user-reader-2/deactivate'), {});
    expect(noReason.status).toBe(400);
    expect(noReason.body.error.message).toMatch(/reason/);

    const response = await call<Person>(admin, 'POST', studyPath('/people/user-reader-2/deactivate'), { reason: 'Left the reading centre' });
    expect(response.status).toBe(200);
    expect(response.body.active).toBe(false);
    const audit = auditRows('user').at(-1)!;
    expect(audit).toMatchObject({ action: 'deactivate', reason: 'Left the reading centre' });
    const listed = (await call<Person[]>(admin, 'GET', studyPath('/people'))).body.find((p) => p.userId === 'user-reader-2');
    expect(listed).toMatchObject({ active: false, roles: [{ role: 'over-reader', siteIds: null }] });

    const me = await call<ErrorBody>(readerTwo, 'GET', '/api/me');
    expect(me.status).toBe(401);
    expect(me.body.error.code).toBe('account-inactive');
    const byToken = await fetch(`${tidemark.url}/api/me`, { headers: { authorization: `Bearer ${token.body.token}` } });
    expect(byToken.status).toBe(401);
    await expect(signIn(tidemark.url, 'reader.two@tidemark.example')).resolves.toMatchObject({ csrfToken: '' });

    const again = await call<ErrorBody>(admin, 'POST', studyPath('/people'), { email: 'reader.two@tidemark.example', name: 'x', role: 'monitor' });
    expect(again.status).toBe(409);
    expect(again.body.error.code).toBe('user-inactive');
  });
});

describe('once the study has data', () => {
  let site: Site;

  beforeAll(async () => {
    site = (await call<Site[]>(admin, 'GET', studyPath('/sites'))).body[0];
    // A demo coordinator joins the new study and registers one session there.
    const joined = await call(admin, 'POST', studyPath('/people'), { email: 'coordinator.101@tidemark.example', name: 'x', role: 'site-coordinator', siteIds: [site.id] });
    expect(joined.status).toBe(201);
    expect((await call(coordinator, 'POST', studyPath(`/sites/${site.id}/subjects`), { code: '501-001' })).status).toBe(201);
    const session = await call(coordinator, 'POST', studyPath(`/sites/${site.id}/sessions`), {
      subjectCode: '501-001',
      visitCode: 'SCR',
      timepointCode: 'PRE',
      bronchodilator: 'pre',
      testedAt: '2026-01-12T09:30:00+01:00',
      demographics: { ageYears: 44, heightCm: 170, weightKg: 70, sex: 'female' },
      technicianCode: 'TECH-01',
    });
    expect(session.status).toBe(201);
  });

  it.each<[string, () => [string, string, unknown]]>([
    ['study settings', () => ['PUT', '/setup', settingsBody({ turnaroundHours: 24 })]],
    ['the schedule', () => ['PUT', '/schedule', { ...SCHEDULE, timepoints: [...SCHEDULE.timepoints, { code: '2H', name: '2 h post-dose' }] }]],
    ['a new site', () => ['POST', '/sites', { number: '503', name: 'Cormorant Bay Clinic', countryCode: 'ZA', timeZone: 'Africa/Johannesburg' }]],
    ['a site change', () => ['PUT', `/sites/${site.id}`, { number: site.number, name: 'Harbourlight Lung Centre', countryCode: 'NO', timeZone: 'Europe/Oslo' }]],
    ['a new person', () => ['POST', '/people', { email: 'late.joiner@tidemark.example', name: 'Late Joiner', role: 'monitor' }]],
    ['a role removal', () => ['DELETE', '/people/user-monitor/roles/monitor', {}]],
  ])('%s need a reason, then are audited with it', async (_label, request) => {
    const [method, path, body] = request();
    const refused = await call<ErrorBody>(admin, method, studyPath(path), body);
    expect(refused.status).toBe(400);
    expect(refused.body.error.code).toBe('reason-required');
    expect(refused.body.error.message).toMatch(/^Study TDM-900 already has a session: give a reason for \w/);
    const reason = `Protocol amendment 2 (${_label})`;
    const accepted = await call(admin, method, studyPath(path), { ...(body as object), reason });
    expect(accepted.status).toBeLessThan(300);
    const reasons = tidemark.deps.db.$client.prepare('select reason from audit_events where study_id = ? and reason = ?').all(study.id, reason);
    expect(reasons.length).toBeGreaterThan(0);
  });

  it('keeps a visit and a timepoint that sessions use', async () => {
    const response = await call<ErrorBody>(admin, 'PUT', studyPath('/schedule'), {
      visits: SCHEDULE.visits.slice(1),
      timepoints: SCHEDULE.timepoints.slice(1),
      reason: 'Drop screening',
    });
    expect(response.status).toBe(409);
    expect(response.body.error.code).toBe('schedule-in-use');
    expect(response.body.error.message).toBe(
      'The visit SCR (Screening) cannot be removed: 1 session uses it; The timepoint PRE (Pre-dose) cannot be removed: 1 session uses it.',
    );
  });

  it('keeps a site with subjects and sessions, saying how many', async () => {
    const response = await call<ErrorBody>(admin, 'DELETE', studyPath(`/sites/${site.id}`), { reason: 'Closed' });
    expect(response.status).toBe(409);
    expect(response.body.error.code).toBe('site-has-data');
    expect(response.body.error.message).toMatch(/Site 501 \(.*\) cannot be removed: it has 1 subject and 1 session/);
  });

  it('reports the session count in the settings', async () => {
    const setup = await call<StudySetup>(admin, 'GET', studyPath('/setup'));
    expect(setup.body.sessionCount).toBe(1);
  });
});
