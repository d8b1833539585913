/**
 * Bronchodilator response, by the criterion a study's protocol names:
 * - `ers-ats-2022`: (post - pre) x 100 / predicted > 10 % for FEV1 or FVC (Stanojevic S, et al.
 *   Eur Respir J 2022;60:2101499).
 * - `ats-ers-2005`: increase >= 12 % of the pre-bronchodilator value
 *   and >= 200 mL, in FEV1 or FVC (Pellegrino R, et al. Eur Respir J 2005;26:948-968, Table 9).
 */
export const BRONCHODILATOR_METHODS = ['ers-ats-2022', 'ats-ers-2005'] as const;

/** A bronchodilator-response criterion a protocol can name (see above). */
export type BronchodilatorMethod = (typeof BRONCHODILATOR_METHODS)[number];

/** Pre and post values of one parameter (FEV1 or FVC), in litres. */
export interface BronchodilatorPair {
  readonly preL: number;
  readonly postL: number;
  /** Predicted value (L); required by the 2022 criterion. */
  readonly predictedL?: number | null;
}

/** Verdict on one parameter. */
export interface ParameterResponse {
  /** Null when the criterion cannot be applied (see `reason`). */
  readonly significant: boolean | null;
  readonly changeL: number;
  /** Change as percent of the pre-bronchodilator value. */
  readonly changePercentOfPre: number;
  /** Change as percent of predicted; null without a predicted value. */
  readonly changePercentOfPredicted: number | null;
  readonly reason?: string;
}

/** Verdict on a whole test: significant when FEV1 or FVC responds. */
export interface BronchodilatorResponse {
  readonly method: BronchodilatorMethod;
  readonly significant: boolean | null;
  readonly fev1: ParameterResponse | null;
  readonly fvc: ParameterResponse | null;
  readonly text: string;
}

/** ERS/ATS 2022 threshold: change > 10 % of predicted. */
export const ERS_ATS_2022_PERCENT_OF_PREDICTED = 10;
/** ATS/ERS 2005 thresholds: >= 12 % of baseline and >= 0.200 L. */
export const ATS_ERS_2005_PERCENT_OF_PRE = 12;
export const ATS_ERS_2005_MINIMUM_CHANGE_L = 0.2;

/** Comparisons at the thresholds ignore binary floating-point noise (e.g. 2.7 - 2.5). */
const EPSILON = 1e-9;

/** Applies one criterion to one parameter. */
export function assessParameterResponse(method: BronchodilatorMethod, pair: BronchodilatorPair): ParameterResponse {
  const { preL, postL } = pair;
  const changeL = postL - preL;
  const changePercentOfPre = preL > 0 ? (changeL * 100) / preL : Number.NaN;
  const predictedL = pair.predictedL;
  const changePercentOfPredicted = predictedL && predictedL > 0 ? (changeL * 100) / predictedL : null;
  const base = { changeL, changePercentOfPre, changePercentOfPredicted };
  if (!(preL > 0) || !Number.isFinite(postL)) {
    return { ...base, significant: null, reason: 'Pre- and post-bronchodilator values must both be positive numbers.' };
  }
  if (method === 'ers-ats-2022') {
    if (changePercentOfPredicted === null) {
      return { ...base, significant: null, reason: 'The ERS/ATS 2022 criterion needs a predicted value.' };
    }
    return { ...base, significant: changePercentOfPredicted > ERS_ATS_2022_PERCENT_OF_PREDICTED + EPSILON };
  }
  return {
    ...base,
    significant:
      changePercentOfPre >= ATS_ERS_2005_PERCENT_OF_PRE - EPSILON && changeL >= ATS_ERS_2005_MINIMUM_CHANGE_L - EPSILON,
  };
}

function describe(name: string, response: ParameterResponse, method: BronchodilatorMethod): string {
  if (response.significant === null) return `${name}: ${response.reason}`;
  const changeMl = Math.round(response.changeL * 1000);
  const measure =
    method === 'ers-ats-2022'
      ? `${response.changePercentOfPredicted?.toFixed(1)} % of predicted`
      : `${response.changePercentOfPre.toFixed(1)} % of baseline`;
  return `${name} changed by ${changeMl} mL (${measure}): ${response.significant ? 'significant' : 'not significant'}.`;
}

/** Applies the protocol's criterion to FEV1 and FVC; a response in either counts. */
export function assessBronchodilatorResponse(
  method: BronchodilatorMethod,
  pairs: { readonly fev1?: BronchodilatorPair; readonly fvc?: BronchodilatorPair },
): BronchodilatorResponse {
  const fev1 = pairs.fev1 ? assessParameterResponse(method, pairs.fev1) : null;
  const fvc = pairs.fvc ? assessParameterResponse(method, pairs.fvc) : null;
  const verdicts = [fev1, fvc].filter((r): r is ParameterResponse => r !== null).map((r) => r.significant);
  const significant = verdicts.includes(true) ? true : verdicts.length > 0 && verdicts.every((v) => v === false) ? false : null;
  const criterion =
    method === 'ers-ats-2022'
      ? 'ERS/ATS 2022 (> 10 % of predicted)'
      : 'ATS/ERS 2005 (>= 12 % of baseline and >= 200 mL)';
  const parts = [fev1 ? describe('FEV1', fev1, method) : null, fvc ? describe('FVC', fvc, method) : null].filter(Boolean);
  const verdictText =
    significant === true
      ? 'Significant bronchodilator response'
      : significant === false
        ? 'No significant bronchodilator response'
        : 'Bronchodilator response could not be assessed';
  return { method, significant, fev1, fvc, text: `${verdictText} by ${criterion}. ${parts.join(' ')}`.trim() };
}
