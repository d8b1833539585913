import { describe, expect, it } from '@jest/globals';
import { readFileSync } from 'node:fs';
import path from 'node:path';
import { resolveProtocol } from './protocol.js';
import { gradeAtLeast, gradeSession, toWholeMl, type GradedValue } from './session-grade.js';

const protocol = resolveProtocol(JSON.parse(readFileSync(path.resolve('protocols/ats-ers-2019.v1.json'), 'utf8')));

const acceptable = (...valuesL: number[]): GradedValue[] =>
  valuesL.map((valueL, effortIndex) => ({ effortIndex, valueL, acceptable: true, usable: false }));

describe('session grade, age over 6', () => {
  // Graham BL et al. 2019 (ATS/ERS), Table 10: one check value per grade.
  it.each([
    [[3.2, 3.12, 3.1], 'A'],
    [[3.2, 3.12], 'B'],
    [[3.2, 3.02], 'C'],
    [[3.2, 2.97], 'D'],
    [[3.2, 2.8], 'E'],
    [[3.2], 'E'],
  ])('%j -> %s', (values, grade) => {
    expect(gradeSession(acceptable(...values), protocol, 45).grade).toBe(grade);
  });

  it('compares in whole millilitres: 3.20 - 3.05 L is within 0.150 L', () => {
    // Graham BL et al. 2019, Table 10 (0.150 L); in binary floating point 3.20 - 3.05 = 0.15000000000000036.
    expect(3.2 - 3.05).toBeGreaterThan(0.15);
    const result = gradeSession(acceptable(3.2, 3.05, 3.0), protocol, 45);
    expect(result.differenceMl).toBe(150);
    expect(result.grade).toBe('A');
    expect(gradeSession(acceptable(3.2, 3.05), protocol, 45).grade).toBe('B');
  });

  it.each([
    // Boundaries of Table 10 (Graham BL et al. 2019) in whole mL: 150 / 151, 200 / 201, 250 / 251.
    [[4.0, 3.85], 'B'],
    [[4.0, 3.849], 'C'],
    [[4.0, 3.8], 'C'],
    [[4.0, 3.799], 'D'],
    [[4.0, 3.75], 'D'],
    [[4.0, 3.749], 'E'],
  ])('boundary %j -> %s', (values, grade) => {
    expect(gradeSession(acceptable(...values), protocol, 30).grade).toBe(grade);
  });

  it('uses the two largest acceptable values, whatever the order of efforts', () => {
    // Graham BL et al. 2019: repeatability is the difference between the two largest acceptable values.
    const result = gradeSession(acceptable(2.5, 3.2, 3.15, 2.1), protocol, 30);
    expect(result.grade).toBe('A');
    expect(result.largestL).toBe(3.2);
    expect(result.secondLargestL).toBe(3.15);
  });

  it('ignores values that are not acceptable, and grades U or F when none is', () => {
    // Graham BL et al. 2019, Table 10: U = 0 acceptable and at least 1 usable; F = none acceptable or usable.
    const mixed: GradedValue[] = [
      { effortIndex: 0, valueL: 3.2, acceptable: true, usable: false },
      { effortIndex: 1, valueL: 3.9, acceptable: false, usable: true },
    ];
    expect(gradeSession(mixed, protocol, 30).grade).toBe('E');
    expect(gradeSession([{ effortIndex: 0, valueL: 3.9, acceptable: false, usable: true }], protocol, 30).grade).toBe('U');
    expect(gradeSession([{ effortIndex: 0, valueL: 3.9, acceptable: false, usable: false }], protocol, 30).grade).toBe('F');
    expect(gradeSession([], protocol, 30).grade).toBe('F');
  });

  it('uses adult tolerances when the age is unknown', () => {
    // Graham BL et al. 2019, Table 10: 0.130 L apart is grade A for age > 6 but not for age <= 6 with small volumes.
    expect(gradeSession(acceptable(1.0, 0.87, 0.86), protocol).grade).toBe('A');
    expect(gradeSession(acceptable(1.0, 0.87, 0.86), protocol, 5).grade).toBe('C');
  });
});

describe('session grade, age 6 or under', () => {
  // Graham BL et al. 2019, Table 10: 0.100 / 0.150 / 0.200 L or 10 % of the highest value, whichever is greater.
  it.each([
    [[1.2, 1.1, 1.09], 'A'], // 100 mL, limit max(100, 120) = 120
    [[1.2, 1.08], 'B'], // 120 mL = 10 % of 1200
    [[1.2, 1.079], 'C'], // 121 mL > 120, <= 150
    [[1.2, 1.05], 'C'],
    [[1.2, 1.0], 'D'], // 200 mL
    [[1.2, 0.999], 'E'],
  ])('small volumes %j -> %s', (values, grade) => {
    expect(gradeSession(acceptable(...values), protocol, 6).grade).toBe(grade);
  });

  it('applies the 10 % rule when it is greater than the fixed limit', () => {
    // Graham BL et al. 2019, Table 10: highest 2.000 L -> 10 % = 200 mL > 100 mL, so 0.190 L apart is still A/B.
    const result = gradeSession(acceptable(2.0, 1.81), protocol, 5);
    expect(result.tolerancesMl.ab).toBe(200);
    expect(result.grade).toBe('B');
    // 10 % of 2.000 L also exceeds the C limit (150 mL): C and D tolerances become 200 mL each.
    expect(gradeSession(acceptable(2.0, 1.79), protocol, 5).grade).toBe('E');
  });

  it('counts age in completed years: 6.9 y is a child, 7.0 y is not', () => {
    // Graham BL et al. 2019: "6 years or younger" (common practice: completed years).
    expect(gradeSession(acceptable(1.0, 0.88), protocol, 6.9).grade).toBe('C');
    expect(gradeSession(acceptable(1.0, 0.88), protocol, 7).grade).toBe('B');
  });
});

describe('grade helpers', () => {
  it('rounds litres to whole millilitres', () => {
    expect(toWholeMl(3.05)).toBe(3050);
    expect(toWholeMl(0.1495)).toBe(150);
  });

  it('orders grades A best to F worst, U above F', () => {
    // Graham BL et al. 2019, Table 10 order; U (usable only) ranks above F.
    expect(gradeAtLeast('A', 'B')).toBe(true);
    expect(gradeAtLeast('C', 'B')).toBe(false);
    expect(gradeAtLeast('U', 'E')).toBe(false);
    expect(gradeAtLeast('U', 'F')).toBe(true);
  });
});
