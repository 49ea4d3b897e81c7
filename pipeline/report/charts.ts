/**
 * The report's three figures. Curves come from the score files through the metrics modules
 * (`scoreCurve`, `rocCurveFromCurve`), so a plotted operating point is the same number the
 * metrics table reports; calibration reads the stack's quantile bins from metrics.json.
 */
import { rocCurveFromCurve } from '../metrics/auc.js';
import { scoreCurve } from '../metrics/curve.js';
import type { CalibrationBin, MetricSet } from '../metrics/evaluate.js';
import { fixed, percent } from './format.js';
import type { ScoreSample } from './read.js';
import { lineChart, ticks, type Axis, type Series } from './svg.js';

export interface Figure {
  readonly title: string;
  readonly svg: string;
  readonly legend: readonly { readonly name: string; readonly color: string }[];
  readonly caption: string;
}

/** Okabe & Ito's colour-blind-safe palette (2008, "Color Universal Design"), minus yellow, which vanishes on white. */
const PALETTE = ['#0072B2', '#E69F00', '#009E73', '#CC79A7', '#56B4E9', '#D55E00'];
const STACK_COLOR = '#1f1f1f';

export function modelColor(models: readonly string[], name: string): string {
  if (name === 'stack') return STACK_COLOR;
  const learners = models.filter((m) => m !== 'stack');
  return PALETTE[learners.indexOf(name) % PALETTE.length];
}

const unit = (label: string): Axis => ({ label, min: 0, max: 1, ticks: ticks(0, 1, 0.2), tickText: (v) => fixed(v, 1) });
const unitPercent = (label: string): Axis => ({ label, min: 0, max: 1, ticks: ticks(0, 1, 0.2), tickText: (v) => percent(v, 0) });

function legendOf(sample: ScoreSample): Figure['legend'] {
  return sample.models.map((m) => ({ name: m, color: modelColor(sample.models, m) }));
}

export function rocFigure(sample: ScoreSample, stack: MetricSet, budget: number): Figure {
  const series: Series[] = [];
  for (let m = 0; m < sample.models.length; m++) {
    const roc = rocCurveFromCurve(scoreCurve(sample.target, sample.scores[m], 'report ROC'));
    if (roc === null) continue;
    const name = sample.models[m];
    series.push({ name, color: modelColor(sample.models, name), xs: roc.fpr, ys: roc.tpr, emphasis: name === 'stack' });
  }
  const fpr = stack.fpr_at_budget;
  const tpr = stack.capture;
  return {
    title: `ROC curve (${sample.part})`,
    svg: lineChart({
      title: `ROC curve, ${sample.part} rows`,
      x: unit('false positive rate'),
      y: unit('true positive rate'),
      series,
      guides: [
        { from: [0, 0], to: [1, 1] },
        ...(fpr === null ? [] : [{ from: [fpr, 0] as const, to: [fpr, 1] as const, label: `FPR ${fixed(fpr, 3)}` }]),
      ],
      marks: fpr === null || tpr === null ? [] : [{ x: fpr, y: tpr, label: `stack at budget: TPR ${fixed(tpr, 3)}` }],
    }),
    legend: legendOf(sample),
    caption: `The dashed vertical line is the false positive rate of the stack when the top ${percent(budget)} of rows are reviewed; the diagonal is a random ranking.`,
  };
}

export function gainsFigure(sample: ScoreSample, stack: MetricSet, budget: number): Figure {
  const series: Series[] = [];
  for (let m = 0; m < sample.models.length; m++) {
    const c = scoreCurve(sample.target, sample.scores[m], 'report gains');
    if (c.nPos === 0) continue;
    const xs = new Float64Array(c.blocks + 1);
    const ys = new Float64Array(c.blocks + 1);
    for (let k = 0; k <= c.blocks; k++) {
      xs[k] = (c.cumPos[k] + c.cumNeg[k]) / c.n;
      ys[k] = c.cumPos[k] / c.nPos;
    }
    const name = sample.models[m];
    series.push({ name, color: modelColor(sample.models, name), xs, ys, emphasis: name === 'stack' });
  }
  return {
    title: `Gains: events captured (${sample.part})`,
    svg: lineChart({
      title: `Cumulative gains, ${sample.part} rows`,
      x: unitPercent('share of rows reviewed (highest scores first)'),
      y: unitPercent('share of events captured'),
      series,
      guides: [
        { from: [0, 0], to: [1, 1] },
        { from: [budget, 0], to: [budget, 1], label: `budget ${percent(budget)}` },
      ],
      marks: stack.capture === null ? [] : [{ x: budget, y: stack.capture, label: `stack captures ${percent(stack.capture)}` }],
    }),
    legend: legendOf(sample),
    caption: `Reviewing the top ${percent(budget)} of rows (dashed line) captures the marked share of all events; the diagonal is a random ranking.`,
  };
}

/** Candidate tick steps for the zoomed calibration axes; the first that gives at most 6 intervals wins. */
const CALIBRATION_STEPS = [0.01, 0.02, 0.05, 0.1, 0.2];

export function calibrationFigure(holdout: readonly CalibrationBin[], oof: readonly CalibrationBin[], part: string): Figure {
  let top = 0;
  for (const b of [...holdout, ...oof]) top = Math.max(top, b.prob_pred, b.prob_true);
  // Event rates in credit and fraud data are small; zooming to the populated corner keeps the bins apart.
  const step = CALIBRATION_STEPS.find((s) => Math.ceil((top * 1.05) / s) <= 6) ?? 0.2;
  const max = Math.min(1, Math.max(step, Math.ceil((top * 1.05) / step) * step));
  const axis = (label: string): Axis => ({ label, min: 0, max, ticks: ticks(0, max, step), tickText: (v) => percent(v, step < 0.05 ? 1 : 0) });
  const series: Series[] = [];
  if (oof.length > 0) series.push({ name: 'stack, out-of-fold', color: '#9a9a9a', xs: oof.map((b) => b.prob_pred), ys: oof.map((b) => b.prob_true), dots: true });
  if (holdout.length > 0) series.push({ name: `stack, ${part}`, color: STACK_COLOR, xs: holdout.map((b) => b.prob_pred), ys: holdout.map((b) => b.prob_true), dots: true, emphasis: true });
  return {
    title: 'Calibration of the stack (quantile bins)',
    svg: lineChart({
      title: 'Calibration: observed event rate against mean predicted probability',
      x: axis('mean predicted probability'),
      y: axis('observed event rate'),
      series,
      guides: [{ from: [0, 0], to: [max, max] }],
    }),
    legend: series.map((s) => ({ name: s.name, color: s.color })),
    caption: 'Ten bins with equal numbers of rows; points on the diagonal are well calibrated, points above it under-predict.',
  };
}
