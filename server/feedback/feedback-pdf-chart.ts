/** Line charts for the feedback report, drawn with pdfkit vector paths. */
type Doc = PDFKit.PDFDocument;

const INK = '#1b1b1f';
const MUTED = '#5d5e66';
const RULE = '#c7c7cf';
/** Enough points per curve for print; the rest only makes the file larger. */
const MAX_POINTS_PER_CURVE = 500;

/** One curve to draw. */
export interface CurveSeries {
  readonly xs: readonly number[];
  readonly ys: readonly number[];
  readonly colour: string;
  readonly width: number;
}

/** Where and what to draw. */
export interface ChartSpec {
  readonly x: number;
  readonly y: number;
  readonly width: number;
  readonly height: number;
  readonly title: string;
  readonly xLabel: string;
  readonly yLabel: string;
  /** Lowest x shown, when the data reach further left than is useful. */
  readonly xFloor?: number;
  readonly series: readonly CurveSeries[];
}

/** One chart drawn with vector paths: frame, grid, ticks, labels, and every series clipped to the frame. */
export function drawChart(doc: Doc, spec: ChartSpec): void {
  const xs = spec.series.flatMap((series) => series.xs);
  const ys = spec.series.flatMap((series) => series.ys);
  const xAxis = withFloor(axis(Math.min(0, ...xs), Math.max(...xs)), spec.xFloor);
  const yAxis = axis(Math.min(0, ...ys), Math.max(...ys));
  const px = (value: number) => spec.x + ((value - xAxis.min) / (xAxis.max - xAxis.min)) * spec.width;
  const py = (value: number) => spec.y + spec.height - ((value - yAxis.min) / (yAxis.max - yAxis.min)) * spec.height;

  doc.fillColor(INK).font('Helvetica-Bold').fontSize(9).text(spec.title, spec.x, spec.y - 12, { width: spec.width, lineBreak: false });
  doc.font('Helvetica').fontSize(7).fillColor(MUTED);
  doc.save().strokeColor(RULE).lineWidth(0.4);
  for (const tick of xAxis.ticks) {
    doc.moveTo(px(tick), spec.y).lineTo(px(tick), spec.y + spec.height).stroke();
    doc.text(tickText(tick, xAxis.step), px(tick) - 15, spec.y + spec.height + 3, { width: 30, align: 'center', lineBreak: false });
  }
  for (const tick of yAxis.ticks) {
    doc.moveTo(spec.x, py(tick)).lineTo(spec.x + spec.width, py(tick)).stroke();
    doc.text(tickText(tick, yAxis.step), spec.x - 28, py(tick) - 3, { width: 25, align: 'right', lineBreak: false });
  }
  doc.restore();
  doc.save().strokeColor(MUTED).lineWidth(0.8).rect(spec.x, spec.y, spec.width, spec.height).stroke().restore();
  doc.fillColor(MUTED).fontSize(8).text(spec.xLabel, spec.x, spec.y + spec.height + 13, { width: spec.width, align: 'center', lineBreak: false });
  doc.save().rotate(-90, { origin: [spec.x - 26, spec.y + spec.height / 2] });
  doc.text(spec.yLabel, spec.x - 26 - spec.height / 2, spec.y + spec.height / 2 - 9, { width: spec.height, align: 'center', lineBreak: false });
  doc.restore();

  doc.save().rect(spec.x, spec.y, spec.width, spec.height).clip();
  for (const series of spec.series) {
    if (series.xs.length < 2) continue;
    doc.moveTo(px(series.xs[0]), py(series.ys[0]));
    for (let i = 1; i < series.xs.length; i++) doc.lineTo(px(series.xs[i]), py(series.ys[i]));
    doc.strokeColor(series.colour).lineWidth(series.width).lineJoin('round').stroke();
  }
  doc.restore();
}

/** A round axis range with ticks every 1, 2 or 5 × 10^n (common practice for chart axes). */
function axis(min: number, max: number): { min: number; max: number; step: number; ticks: number[] } {
  const span = max > min ? max - min : 1;
  const rough = span / 5;
  const magnitude = 10 ** Math.floor(Math.log10(rough));
  const step = [1, 2, 5, 10].map((factor) => factor * magnitude).find((candidate) => candidate >= rough) ?? 10 * magnitude;
  const low = Math.floor(min / step) * step;
  const high = Math.ceil((max > min ? max : min + 1) / step) * step;
  const ticks: number[] = [];
  for (let tick = low; tick <= high + step / 2; tick += step) ticks.push(Number(tick.toFixed(6)));
  return { min: low, max: high, step, ticks };
}

/** The axis cut at `floor` (ticks below it dropped), when it reaches further left. */
function withFloor(range: ReturnType<typeof axis>, floor: number | undefined): ReturnType<typeof axis> {
  if (floor === undefined || range.min >= floor) return range;
  return { ...range, min: floor, ticks: range.ticks.filter((tick) => tick >= floor) };
}

function tickText(value: number, step: number): string {
  const decimals = step >= 1 ? 0 : Math.min(3, Math.ceil(-Math.log10(step)));
  return value.toFixed(decimals);
}

/** Keeps at most {@link MAX_POINTS_PER_CURVE} points, evenly spaced, always with the last one. */
export function thinCurve(xs: readonly number[], ys: readonly number[]): { xs: number[]; ys: number[] } {
  const stride = Math.max(1, Math.ceil(xs.length / MAX_POINTS_PER_CURVE));
  const keptX: number[] = [];
  const keptY: number[] = [];
  for (let i = 0; i < xs.length; i += stride) {
    keptX.push(xs[i]);
    keptY.push(ys[i]);
  }
  if (xs.length > 0 && (xs.length - 1) % stride !== 0) {
    keptX.push(xs[xs.length - 1]);
    keptY.push(ys[ys.length - 1]);
  }
  return { xs: keptX, ys: keptY };
}
