import { SpirometryInputError } from '../../shared/spirometry/model.js';

/** Coefficients read from one equation written as text, e.g. "exp(-11.399108 + 2.462664*ln(height) – 0.011394*ln(age) + M Spline)". */
export interface GliEquationTerms {
  readonly constant: number;
  readonly lnHeight: number;
  readonly lnAge: number;
  /** Whether the equation adds its spline (always required for M and S). */
  readonly hasSpline: boolean;
}

type TermSymbol = 'lnHeight' | 'lnAge' | 'spline';

const SYMBOLS: readonly { pattern: RegExp; symbol: TermSymbol }[] = [
  { pattern: /^ln\((height|heightcm|height_cm|ht)\)/, symbol: 'lnHeight' },
  { pattern: /^ln\(age\)/, symbol: 'lnAge' },
  { pattern: /^[msl]spline/, symbol: 'spline' },
];

/**
 * Reads the M, S or L equation of a GLI lookup sheet. Tolerates the publisher's typography
 * (en dashes as minus signs, spaces, "M Spline" or "MSpline", capitals). M and S must be
 * exp(...) with their spline; M must have a height term; S and L must not.
 */
export function parseGliEquation(text: string, symbol: 'M' | 'S' | 'L', where: string): GliEquationTerms {
  const fail = (message: string): never => {
    throw new SpirometryInputError('reference-equation', `${where}: the ${symbol} equation "${text}" ${message}`);
  };
  let body = text.replace(/[\u2012-\u2015\u2212]/g, '-').replace(/\s+/g, '').toLowerCase();
  if (body === '') fail('is empty.');
  if (symbol !== 'L') {
    const exp = /^exp\((.*)\)$/.exec(body);
    if (!exp) fail('should have the form exp(...).');
    body = (exp as RegExpExecArray)[1];
  }
  const found: Partial<Record<TermSymbol | 'constant', number>> = {};
  let rest = body;
  while (rest.length > 0) {
    const sign = /^[+-]/.exec(rest);
    const negative = sign?.[0] === '-';
    if (sign) rest = rest.slice(1);
    const number = /^(\d+\.?\d*|\.\d+)(e[+-]?\d+)?/.exec(rest);
    if (number) rest = rest.slice(number[0].length);
    const multiplied = number !== null && rest.startsWith('*');
    if (multiplied) rest = rest.slice(1);
    const term = SYMBOLS.find((s) => s.pattern.test(rest));
    if ((!number && !term) || (multiplied && !term)) fail(`cannot be read from "${rest}".`);
    if (term) rest = rest.replace(term.pattern, '');
    if (rest !== '' && !/^[+-]/.test(rest)) fail(`cannot be read from "${rest}".`);
    if (term?.symbol === 'spline' && number) fail('multiplies the spline by a coefficient, which GLI equations never do.');
    const name = term?.symbol ?? 'constant';
    if (found[name] !== undefined) fail(`has more than one ${name === 'constant' ? 'constant' : name} term.`);
    const magnitude = number ? Number(number[0]) : 1;
    found[name] = negative ? -magnitude : magnitude;
  }
  if (found.constant === undefined) fail('has no constant term.');
  if (symbol === 'M' && found.lnHeight === undefined) fail('has no ln(height) term.');
  if (symbol !== 'M' && found.lnHeight !== undefined) fail('has a height term, which GLI S and L equations do not have.');
  if (symbol !== 'L' && found.spline !== 1) fail(`does not add the ${symbol} spline.`);
  return {
    constant: found.constant as number,
    lnHeight: found.lnHeight ?? 0,
    lnAge: found.lnAge ?? 0,
    hasSpline: found.spline === 1,
  };
}
