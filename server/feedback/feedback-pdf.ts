import type { SiteFeedback } from '../../shared/contracts/reading.js';
import type { SessionCurves } from '../../shared/contracts/sessions.js';
import { drawChart, thinCurve, type CurveSeries } from './feedback-pdf-chart.js';

/** Everything the PDF report shows: the feedback and the session it belongs to, as the site knows it. */
export interface FeedbackReport {
  readonly feedback: SiteFeedback;
  readonly studyCode: string;
  readonly siteNumber: string;
  readonly subjectCode: string;
  readonly visitCode: string;
  readonly timepointCode: string;
  readonly bronchodilator: 'pre' | 'post';
  /** ISO UTC; shown in the site's zone. */
  readonly testedAt: string;
  readonly timeZone: string;
  /** Null when the stored file could not be read: the report then says the curves are missing. */
  readonly curves: SessionCurves | null;
}

type Doc = PDFKit.PDFDocument;

const MARGIN = 50;
const PAGE_WIDTH = 595.28;
const CONTENT_WIDTH = PAGE_WIDTH - 2 * MARGIN;
const INK = '#1b1b1f';
const MUTED = '#5d5e66';
const RULE = '#c7c7cf';
const FAINT_FILL = '#f1f1f5';
const OTHER_EFFORT = '#a9abb5';
const FEV1_COLOUR = '#1f5fa8';
const FVC_COLOUR = '#b35300';

/** What a session grade says, after ATS/ERS 2019 (Graham et al. 2019), Table 10. */
const GRADE_WORDS: Readonly<Record<string, string>> = {
  A: 'three or more acceptable efforts that agree closely',
  B: 'two acceptable efforts that agree closely',
  C: 'two or more acceptable efforts that agree fairly well',
  D: 'two or more acceptable efforts that agree poorly',
  E: 'acceptable efforts that do not agree, or only one acceptable effort',
  U: 'no acceptable effort, but at least one usable',
  F: 'no acceptable or usable effort',
};

const VERDICT_WORDS: Readonly<Record<string, string>> = {
  acceptable: 'Acceptable',
  usable: 'Usable',
  not_acceptable: 'Not acceptable',
};

/**
 * Renders the site's over-read feedback as an A4 PDF: session reference, grades, reported values,
 * coaching per effort, the curves drawn as vector paths, the signature and the caution.
 */
export async function renderFeedbackPdf(report: FeedbackReport): Promise<Buffer> {
  // Loaded at the first report, not at start: pdfkit and its fonts take some 15 MB the server needs only then.
  const { default: PDFDocument } = await import('pdfkit');
  const doc = new PDFDocument({
    size: 'A4',
    margin: MARGIN,
    // Uncompressed: the report is small, and its text stays searchable by simple tools and tests.
    compress: false,
    bufferPages: true,
    info: {
      Title: `Over-read feedback: subject ${report.subjectCode}, visit ${report.visitCode}`,
      Subject: `Study ${report.studyCode}, site ${report.siteNumber}`,
      Creator: 'Tidemark',
    },
  });
  const chunks: Buffer[] = [];
  doc.on('data', (chunk: Buffer) => chunks.push(chunk));
  const finished = new Promise<Buffer>((resolve, reject) => {
    doc.on('end', () => resolve(Buffer.concat(chunks)));
    doc.on('error', reject);
  });

  drawTitle(doc, report);
  drawSessionReference(doc, report);
  drawResult(doc, report.feedback);
  drawCoaching(doc, report.feedback);
  drawEffortTable(doc, report.feedback);
  drawCurves(doc, report);
  drawSignature(doc, report.feedback);
  drawCaution(doc, report.feedback.caution);
  drawFooters(doc, report);
  doc.end();
  return finished;
}

function drawTitle(doc: Doc, report: FeedbackReport): void {
  doc.fillColor(INK).font('Helvetica-Bold').fontSize(18).text('Over-read feedback', MARGIN, MARGIN);
  doc
    .moveDown(0.2)
    .fillColor(MUTED)
    .font('Helvetica')
    .fontSize(10)
    .text(`Study ${report.studyCode} · site ${report.siteNumber} · released ${utcText(report.feedback.releasedAt)}`);
  doc.moveDown(0.8);
}

function drawSessionReference(doc: Doc, report: FeedbackReport): void {
  heading(doc, 'Session');
  const pairs: [string, string][] = [
    ['Subject', report.subjectCode],
    ['Visit', report.visitCode],
    ['Timepoint', report.timepointCode],
    ['Bronchodilator', report.bronchodilator === 'pre' ? 'Before bronchodilator' : 'After bronchodilator'],
    ['Tested at (site time)', zonedText(report.testedAt, report.timeZone)],
    ['Site', report.siteNumber],
  ];
  const columnWidth = CONTENT_WIDTH / 2;
  const top = doc.y;
  pairs.forEach(([label, value], position) => {
    const x = MARGIN + (position % 2) * columnWidth;
    const y = top + Math.floor(position / 2) * 30;
    doc.fillColor(MUTED).font('Helvetica').fontSize(8).text(label.toUpperCase(), x, y, { width: columnWidth - 10 });
    doc.fillColor(INK).font('Helvetica').fontSize(10).text(value, x, y + 10, { width: columnWidth - 10 });
  });
  doc.x = MARGIN;
  doc.y = top + Math.ceil(pairs.length / 2) * 30 + 6;
}

function drawResult(doc: Doc, feedback: SiteFeedback): void {
  const { result } = feedback;
  heading(doc, 'Session result');
  const labelOf = (index: number | null) =>
    index === null ? 'none' : (feedback.efforts.find((effort) => effort.index === index)?.label ?? `Effort ${index + 1}`);
  const litres = (value: number | null) => (value === null ? 'none' : `${value.toFixed(2)} L`);
  table(
    doc,
    [
      { title: '', width: 60 },
      { title: 'Grade', width: 235 },
      { title: 'Reported', width: 80 },
      { title: 'From effort', width: CONTENT_WIDTH - 375 },
    ],
    [
      ['FEV1', gradeText(result.fev1Grade), litres(result.reportedFev1L), labelOf(result.fev1EffortIndex)],
      ['FVC', gradeText(result.fvcGrade), litres(result.reportedFvcL), labelOf(result.fvcEffortIndex)],
      ['FEV1/FVC', '', result.fev1FvcRatio === null ? 'none' : `${Math.round(result.fev1FvcRatio * 100)} %`, ''],
    ],
  );
  const eligible = (ok: boolean) => (ok ? 'counts' : 'does not count');
  doc
    .fillColor(INK)
    .font('Helvetica')
    .fontSize(9)
    .text(
      `For the study endpoint: FEV1 ${eligible(result.endpointEligible.fev1)}, FVC ${eligible(result.endpointEligible.fvc)}.` +
        (result.endpointEligible.reasons.length ? ` ${result.endpointEligible.reasons.join('; ')}.` : ''),
      MARGIN,
      doc.y + 4,
      { width: CONTENT_WIDTH },
    );
  doc.moveDown(0.8);
}

function drawCoaching(doc: Doc, feedback: SiteFeedback): void {
  if (!feedback.sessionCoaching.length && !feedback.feedbackText.trim()) return;
  heading(doc, 'What to coach next time');
  doc.fillColor(INK).font('Helvetica').fontSize(10);
  for (const line of feedback.sessionCoaching) {
    ensureSpace(doc, doc.heightOfString(line, { width: CONTENT_WIDTH - 12 }) + 4);
    doc.text(`•  ${line}`, MARGIN, doc.y, { width: CONTENT_WIDTH, indent: 0 });
    doc.moveDown(0.2);
  }
  if (feedback.feedbackText.trim()) {
    ensureSpace(doc, 40);
    doc.moveDown(0.3).font('Helvetica-Bold').text("Over-reader's note", MARGIN, doc.y);
    doc.font('Helvetica').text(feedback.feedbackText.trim(), { width: CONTENT_WIDTH });
  }
  doc.moveDown(0.8);
}

function drawEffortTable(doc: Doc, feedback: SiteFeedback): void {
  heading(doc, 'Efforts');
  table(
    doc,
    [
      { title: 'Effort', width: 80 },
      { title: 'FEV1', width: 75 },
      { title: 'FVC', width: 75 },
      { title: 'Coaching and comment', width: CONTENT_WIDTH - 230 },
    ],
    feedback.efforts.map((effort) => {
      const notes = [...effort.coaching, ...(effort.comment.trim() ? [`Over-reader: ${effort.comment.trim()}`] : [])];
      const text = notes.length > 1 ? notes.map((note) => `•  ${note}`).join('\n') : (notes[0] ?? 'No remarks.');
      return [effort.label, VERDICT_WORDS[effort.fev1Verdict], VERDICT_WORDS[effort.fvcVerdict], text];
    }),
  );
  doc.moveDown(0.8);
}

function drawCurves(doc: Doc, report: FeedbackReport): void {
  const plotHeight = 180;
  ensureSpace(doc, plotHeight + 90);
  heading(doc, 'Curves');
  const { curves, feedback } = report;
  if (!curves || curves.efforts.length === 0) {
    doc.fillColor(MUTED).font('Helvetica').fontSize(10).text('The curves could not be drawn: the stored session file could not be read. The values above are complete.', MARGIN, doc.y, { width: CONTENT_WIDTH });
    doc.moveDown(0.8);
    return;
  }
  const fev1Index = feedback.result.fev1EffortIndex;
  const fvcIndex = feedback.result.fvcEffortIndex;
  const colourOf = (index: number) => (index === fev1Index ? FEV1_COLOUR : index === fvcIndex ? FVC_COLOUR : OTHER_EFFORT);
  // Other efforts first, so the reported ones are drawn on top.
  const ordered = [...curves.efforts].sort((a, b) => Number(colourOf(a.index) !== OTHER_EFFORT) - Number(colourOf(b.index) !== OTHER_EFFORT));
  const series = (pick: (effort: SessionCurves['efforts'][number]) => [number[], number[]]): CurveSeries[] =>
    ordered.map((effort) => {
      const [xs, ys] = pick(effort);
      const highlighted = colourOf(effort.index) !== OTHER_EFFORT;
      return { ...thinCurve(xs, ys), colour: colourOf(effort.index), width: highlighted ? 1.6 : 0.8 };
    });
  const gap = 30;
  const plotWidth = (CONTENT_WIDTH - gap - 2 * 30) / 2;
  const top = doc.y + 18;
  drawChart(doc, {
    x: MARGIN + 30,
    y: top,
    width: plotWidth,
    height: plotHeight,
    title: 'Volume-time',
    xLabel: 'Time (s)',
    yLabel: 'Volume (L)',
    // The second before time zero is enough to judge the start (common practice for printed curves).
    xFloor: -1,
    series: series((effort) => [effort.timeS, effort.volumeL]),
  });
  drawChart(doc, {
    x: MARGIN + 30 + plotWidth + gap + 30,
    y: top,
    width: plotWidth,
    height: plotHeight,
    title: 'Flow-volume',
    xLabel: 'Volume (L)',
    yLabel: 'Flow (L/s)',
    series: series((effort) => [effort.volumeL, effort.flowLPerS]),
  });
  doc.y = top + plotHeight + 34;
  drawLegend(doc, feedback, fev1Index, fvcIndex);
}

function drawLegend(doc: Doc, feedback: SiteFeedback, fev1Index: number | null, fvcIndex: number | null): void {
  const labelOf = (index: number) => feedback.efforts.find((effort) => effort.index === index)?.label ?? `Effort ${index + 1}`;
  const entries: [string, string][] = [];
  if (fev1Index !== null) {
    entries.push([FEV1_COLOUR, fev1Index === fvcIndex ? `${labelOf(fev1Index)}: reported FEV1 and FVC` : `${labelOf(fev1Index)}: reported FEV1`]);
  }
  if (fvcIndex !== null && fvcIndex !== fev1Index) entries.push([FVC_COLOUR, `${labelOf(fvcIndex)}: reported FVC`]);
  entries.push([OTHER_EFFORT, 'Other efforts']);
  let x = MARGIN;
  const y = doc.y;
  doc.font('Helvetica').fontSize(8);
  for (const [colour, text] of entries) {
    doc.save().strokeColor(colour).lineWidth(2).moveTo(x, y + 4).lineTo(x + 18, y + 4).stroke().restore();
    doc.fillColor(INK).text(text, x + 22, y, { lineBreak: false });
    x += 22 + doc.widthOfString(text) + 18;
  }
  doc.x = MARGIN;
  doc.y = y + 20;
}

function drawSignature(doc: Doc, feedback: SiteFeedback): void {
  ensureSpace(doc, 70);
  heading(doc, 'Signature');
  const { signature } = feedback;
  doc
    .fillColor(INK)
    .font('Helvetica')
    .fontSize(10)
    .text(`Signed electronically by ${signature.printedName}, meaning "${signature.meaning}", on ${utcText(signature.signedAt)}.`, MARGIN, doc.y, {
      width: CONTENT_WIDTH,
    });
  doc
    .font('Helvetica-Bold')
    .fillColor(signature.valid ? INK : '#b3261e')
    .text(
      signature.valid
        ? 'The signature is valid: the read is unchanged since it was signed.'
        : 'The signature is NOT valid: the read changed after it was signed. Ask the study team before using these results.',
      { width: CONTENT_WIDTH },
    );
  doc.moveDown(0.8);
}

function drawCaution(doc: Doc, caution: string): void {
  doc.font('Helvetica').fontSize(9);
  const height = doc.heightOfString(caution, { width: CONTENT_WIDTH - 20 }) + 16;
  ensureSpace(doc, height + 4);
  const top = doc.y;
  doc.save().rect(MARGIN, top, CONTENT_WIDTH, height).fillAndStroke(FAINT_FILL, RULE).restore();
  doc.fillColor(INK).text(caution, MARGIN + 10, top + 8, { width: CONTENT_WIDTH - 20 });
  doc.x = MARGIN;
  doc.y = top + height + 6;
}

/** "Page n of m" and the session on every page, written once all pages exist. */
function drawFooters(doc: Doc, report: FeedbackReport): void {
  const range = doc.bufferedPageRange();
  for (let page = range.start; page < range.start + range.count; page++) {
    doc.switchToPage(page);
    // Writing inside the bottom margin would make pdfkit start a new page.
    const bottom = doc.page.margins.bottom;
    doc.page.margins.bottom = 0;
    doc
      .fillColor(MUTED)
      .font('Helvetica')
      .fontSize(8)
      .text(
        `Tidemark over-read feedback · subject ${report.subjectCode}, visit ${report.visitCode} · page ${page - range.start + 1} of ${range.count}`,
        MARGIN,
        doc.page.height - 32,
        { width: CONTENT_WIDTH, align: 'center', lineBreak: false },
      );
    doc.page.margins.bottom = bottom;
  }
}

function heading(doc: Doc, text: string): void {
  ensureSpace(doc, 40);
  doc.fillColor(INK).font('Helvetica-Bold').fontSize(12).text(text, MARGIN, doc.y, { width: CONTENT_WIDTH });
  const y = doc.y + 2;
  doc.save().strokeColor(RULE).lineWidth(0.6).moveTo(MARGIN, y).lineTo(MARGIN + CONTENT_WIDTH, y).stroke().restore();
  doc.y = y + 6;
}

interface Column {
  readonly title: string;
  readonly width: number;
}

/** A simple ruled table; rows grow to fit their text and move to a new page whole. */
function table(doc: Doc, columns: readonly Column[], rows: readonly (readonly string[])[]): void {
  const padding = 4;
  const rowHeight = (cells: readonly string[], font: string) => {
    doc.font(font).fontSize(9);
    return Math.max(...cells.map((cell, i) => doc.heightOfString(cell || ' ', { width: columns[i].width - 2 * padding }))) + 2 * padding;
  };
  const drawRow = (cells: readonly string[], font: string, fill: string | null) => {
    const height = rowHeight(cells, font);
    ensureSpace(doc, height);
    const top = doc.y;
    if (fill) doc.save().rect(MARGIN, top, CONTENT_WIDTH, height).fill(fill).restore();
    let x = MARGIN;
    doc.font(font).fontSize(9).fillColor(INK);
    cells.forEach((cell, i) => {
      doc.text(cell, x + padding, top + padding, { width: columns[i].width - 2 * padding });
      x += columns[i].width;
    });
    doc.save().strokeColor(RULE).lineWidth(0.5).moveTo(MARGIN, top + height).lineTo(MARGIN + CONTENT_WIDTH, top + height).stroke().restore();
    doc.x = MARGIN;
    doc.y = top + height;
  };
  drawRow(
    columns.map((column) => column.title),
    'Helvetica-Bold',
    FAINT_FILL,
  );
  for (const row of rows) drawRow(row, 'Helvetica', null);
}

/** Starts a new page when less than `height` points are left on this one. */
function ensureSpace(doc: Doc, height: number): void {
  if (doc.y + height > doc.page.height - doc.page.margins.bottom) {
    doc.addPage();
    doc.x = MARGIN;
    doc.y = MARGIN;
  }
}

function gradeText(grade: string): string {
  return `${grade}: ${GRADE_WORDS[grade] ?? 'not graded'}`;
}

function utcText(iso: string): string {
  return `${iso.slice(0, 16).replace('T', ' ')} UTC`;
}

/** "20 Nov 2026, 09:30 (Europe/Oslo)": a UTC time as the site's clock showed it. */
export function zonedText(iso: string, timeZone: string): string {
  const text = new Intl.DateTimeFormat('en-GB', {
    timeZone,
    year: 'numeric',
    month: 'short',
    day: '2-digit',
    hour: '2-digit',
    minute: '2-digit',
    hourCycle: 'h23',
  }).format(new Date(iso));
  return `${text} (${timeZone})`;
}
