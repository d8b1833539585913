/**
 * Feedback to the site from the final over-read, end to end: a reader claims, judges and signs a
 * read through the reading room's routes (single-read study, so the signed read is final), then
 * the site, the data manager and the monitor fetch the feedback as JSON and as a PDF report.
 */
import { afterAll, beforeAll, describe, expect, it } from '@jest/globals';
import type { QueuePage, ReadWorkspace, SiteFeedback } from '../../shared/contracts/reading.js';
import { FEEDBACK_CAUTION, SITE_SIGNER_LABEL } from '../../server/feedback/feedback-service.js';
import { COACHING_BY_FINDING } from '../../server/feedback/coaching-text.js';
import { DEMO_STUDY } from '../../server/seed/demo-study.js';
import { signIn, startTidemarkForTest, type CookieClient } from '../support/tidemark-under-test.js';

type Running = Awaited<ReturnType<typeof startTidemarkForTest>>;
type Caller = { client: CookieClient; csrfToken: string };

/** The coordinator who sees each demo site, and one who does not. */
const COORDINATOR_OF_SITE: Record<string, string> = {
  'site-101': 'coordinator.101@tidemark.example',
  'site-102': 'coordinator.102@tidemark.example',
  'site-201': 'coordinator.201@tidemark.example',
  'site-301': 'coordinator.201@tidemark.example',
};

let tidemark: Running;
let reader: Caller;
let dataManager: Caller;
let monitor: Caller;
let siteCoordinator: Caller;
let otherCoordinator: Caller;
let coordinatorEmail: string;
let session: { id: string; siteId: string; subjectCode: string };
let read: ReadWorkspace;
let signed: ReadWorkspace;
let mailsBeforeSigning: number;
const studyUrl = () => `${tidemark.url}/api/studies/${DEMO_STUDY.id}`;
const feedbackUrl = () => `${studyUrl()}/sessions/${session.id}/feedback`;

function call(caller: Caller, method: string, url: string, body?: unknown) {
  return caller.client.fetch(url, {
    method,
    headers: { 'content-type': 'application/json', 'x-csrf-token': caller.csrfToken },
    body: body === undefined ? undefined : JSON.stringify(body),
  });
}

/**
 * The text drawn on the pages of an uncompressed pdfkit document: the hex strings of every TJ
 * operator (standard fonts, WinAnsi, so Latin-1 decoding is exact), one line per operator.
 */
function pdfText(bytes: Buffer): string {
  const source = bytes.toString('latin1');
  const lines = [...source.matchAll(/\[((?:<[0-9a-f]*>\s*-?[\d.]*\s*)*)\]\s*TJ/gi)].map(([, parts]) =>
    [...parts.matchAll(/<([0-9a-f]*)>/gi)].map(([, hex]) => Buffer.from(hex, 'hex').toString('latin1')).join(''),
  );
  return lines.join('\n').replace(/\s+/g, ' ');
}

beforeAll(async () => {
  tidemark = await startTidemarkForTest();
  [reader, dataManager, monitor] = await Promise.all(
    ['reader.one@tidemark.example', 'data.manager@tidemark.example', 'monitor@tidemark.example'].map((email) => signIn(tidemark.url, email)),
  );
  const queue = (await (await call(reader, 'GET', `${studyUrl()}/reading/queue`)).json()) as QueuePage;
  expect(queue.items.length).toBeGreaterThan(0);
  const claimed = await call(reader, 'POST', `${studyUrl()}/reading/claims`, { queueToken: queue.items[0].queueToken });
  expect(claimed.status).toBe(201);
  read = (await claimed.json()) as ReadWorkspace;

  // The reader's workspace is blinded; the test finds the session behind the read in the database.
  session = tidemark.deps.db.$client
    .prepare(
      `select s.id, s.site_id as siteId, subj.code as subjectCode
         from reads r join test_sessions s on s.id = r.session_id join subjects subj on subj.id = s.subject_id where r.id = ?`,
    )
    .get(read.readId) as typeof session;
  coordinatorEmail = COORDINATOR_OF_SITE[session.siteId];
  siteCoordinator = await signIn(tidemark.url, coordinatorEmail);
  otherCoordinator = await signIn(
    tidemark.url,
    Object.entries(COORDINATOR_OF_SITE).find(([, email]) => email !== coordinatorEmail)![1],
  );
});
afterAll(async () => {
  await tidemark?.close();
});

describe('before the read is final', () => {
  it('has no feedback for the site (404), as JSON or PDF', async () => {
    for (const url of [feedbackUrl(), `${feedbackUrl()}.pdf`]) {
      const response = await call(siteCoordinator, 'GET', url);
      expect(response.status).toBe(404);
      expect(((await response.json()) as { error: { message: string } }).error.message).toContain('not final yet');
    }
  });
});

describe('once the read is signed', () => {
  beforeAll(async () => {
    const verdicts = read.efforts.map((effort, position) =>
      position === 0
        ? { effortIndex: effort.index, fev1Verdict: 'not_acceptable', fvcVerdict: 'not_acceptable', findings: ['bev-excessive', 'end-early'], comment: 'Hesitant start, short blow.' }
        : {
            effortIndex: effort.index,
            fev1Verdict: effort.suggestedFev1Verdict,
            fvcVerdict: effort.suggestedFvcVerdict,
            findings: effort.findings.map((finding) => finding.code),
            comment: '',
          },
    );
    const saved = await call(reader, 'PUT', `${studyUrl()}/reads/${read.readId}`, {
      version: read.version,
      verdicts,
      feedbackText: 'Good cooperation; watch the start of each blow.',
    });
    expect(saved.status).toBe(200);
    const draft = (await saved.json()) as ReadWorkspace;
    mailsBeforeSigning = tidemark.fakes.mail!.messages.length;
    const response = await call(reader, 'POST', `${studyUrl()}/reads/${read.readId}/sign`, { version: draft.version, meaning: 'authored' });
    expect(response.status).toBe(200);
    signed = (await response.json()) as ReadWorkspace;
  });

  it('gives the site grades, reported values and coaching per effort, signed by the "Central over-reader"', async () => {
    const response = await call(siteCoordinator, 'GET', feedbackUrl());
    expect(response.status).toBe(200);
    const text = await response.text();
    const feedback = JSON.parse(text) as SiteFeedback;
    expect(feedback).toMatchObject({
      sessionId: session.id,
      result: signed.result,
      feedbackText: 'Good cooperation; watch the start of each blow.',
      caution: FEEDBACK_CAUTION,
      signature: { printedName: SITE_SIGNER_LABEL, meaning: 'authored', valid: true, signedAt: signed.signature!.signedAt },
    });
    expect(feedback.efforts).toHaveLength(read.efforts.length);
    expect(feedback.efforts[0]).toMatchObject({
      fev1Verdict: 'not_acceptable',
      fvcVerdict: 'not_acceptable',
      coaching: [COACHING_BY_FINDING['bev-excessive'], COACHING_BY_FINDING['end-early']],
      comment: 'Hesitant start, short blow.',
    });
    expect(feedback.caution).toContain('support, and do not replace, review by qualified staff');
    // Who read is a matter of study blinding: the site never learns the reader's name.
    expect(text).not.toContain('Vandermeer');
  });

  it('names the signer to the data manager and the monitor', async () => {
    for (const caller of [dataManager, monitor]) {
      const feedback = (await (await call(caller, 'GET', feedbackUrl())).json()) as SiteFeedback;
      expect(feedback.signature.printedName).toBe('Dr Ilse Vandermeer');
    }
  });

  it('refuses the feedback to readers (403) and to other sites (404)', async () => {
    expect((await call(reader, 'GET', feedbackUrl())).status).toBe(403);
    expect((await call(reader, 'GET', `${feedbackUrl()}.pdf`)).status).toBe(403);
    expect((await call(otherCoordinator, 'GET', feedbackUrl())).status).toBe(404);
    expect((await call(otherCoordinator, 'GET', `${feedbackUrl()}.pdf`)).status).toBe(404);
  });

  it('e-mails the coordinators of the site that the feedback is ready, with a link to the session', async () => {
    await tidemark.services.messages.settle();
    const mails = tidemark.fakes
      .mail!.messages.slice(mailsBeforeSigning)
      .map((raw) => raw.replace(/=\r?\n/g, '').replace(/\r?\n(?=[ \t])/g, ''))
      .filter((mail) => mail.includes(`To: ${coordinatorEmail}`));
    expect(mails).toHaveLength(1);
    expect(mails[0]).toMatch(/^Subject: Over-read feedback ready: subject /m);
    expect(mails[0]).toContain(`/site-desk/sessions/${DEMO_STUDY.id}/${session.id}`);
    expect(mails[0]).not.toContain('Vandermeer');
  });

  describe('the PDF report', () => {
    let bytes: Buffer;
    let text: string;

    beforeAll(async () => {
      const response = await call(siteCoordinator, 'GET', `${feedbackUrl()}.pdf`);
      expect(response.status).toBe(200);
      expect(response.headers.get('content-type')).toBe('application/pdf');
      expect(response.headers.get('content-disposition')).toMatch(new RegExp(`^attachment; filename="?feedback-${session.subjectCode}-`));
      bytes = Buffer.from(await response.arrayBuffer());
      text = pdfText(bytes);
    });

    it('is a complete PDF document', () => {
      expect(bytes.subarray(0, 5).toString('latin1')).toBe('%PDF-');
      expect(bytes.subarray(-8).toString('latin1')).toContain('%%EOF');
    });

    it('carries the session, the grades, the coaching, the blinded signature and the caution', () => {
      expect(text).toContain(`Over-read feedback`);
      expect(text).toContain(session.subjectCode);
      expect(text).toContain(`${signed.result.fev1Grade}: `);
      expect(text).toContain('Slow start: coach a faster, more forceful blast');
      expect(text).toContain('Hesitant start, short blow.');
      expect(text).toContain(`Signed electronically by ${SITE_SIGNER_LABEL}, meaning "authored"`);
      expect(text).toContain(FEEDBACK_CAUTION);
      expect(text).not.toContain('Vandermeer');
    });

    it('draws the curves as vector paths, with the reported efforts in the legend', () => {
      expect(text).toContain('Volume-time');
      expect(text).toContain('Flow-volume');
      expect(text).toMatch(/reported FEV1/);
      const lineSegments = bytes.toString('latin1').match(/ l\n/g) ?? [];
      expect(lineSegments.length).toBeGreaterThan(100 * read.efforts.length);
    });

    it('names the signer in the data manager\'s copy', async () => {
      const managerCopy = Buffer.from(await (await call(dataManager, 'GET', `${feedbackUrl()}.pdf`)).arrayBuffer());
      expect(pdfText(managerCopy)).toContain('Signed electronically by Dr Ilse Vandermeer');
    });
  });

  it('shows the signature as not valid once the signed read was changed behind the app\'s back', async () => {
    const db = tidemark.deps.db.$client;
    const original = (db.prepare('select feedback_text as text from reads where id = ?').get(read.readId) as { text: string }).text;
    db.prepare('update reads set feedback_text = ? where id = ?').run('Changed after signing.', read.readId);
    try {
      const feedback = (await (await call(siteCoordinator, 'GET', feedbackUrl())).json()) as SiteFeedback;
      expect(feedback.signature.valid).toBe(false);
      const pdf = pdfText(Buffer.from(await (await call(siteCoordinator, 'GET', `${feedbackUrl()}.pdf`)).arrayBuffer()));
      expect(pdf).toContain('The signature is NOT valid');
    } finally {
      db.prepare('update reads set feedback_text = ? where id = ?').run(original, read.readId);
    }
  });
});
