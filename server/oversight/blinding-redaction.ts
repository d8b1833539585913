/**
 * What a blinded monitor must not see in audited values. Pure: no I/O.
 *
 * Tidemark stores no treatment arm, randomisation code, kit number or dose group: randomisation
 * lives in the sponsor's IRT system, and nothing Tidemark records derives from it. So today no
 * audited value carries treatment information, and this rule withholds nothing in practice. It
 * is kept as a guard: should a field of that kind ever reach an audited value (a future import,
 * a metadata field carried from a device file), a blinded monitor sees that it was withheld and
 * where, instead of its value. Free text (reasons, comments) cannot be screened by field name;
 * it is covered by the study's instructions to the people who write it.
 */

/** Shown instead of a withheld value. */
export const WITHHELD_VALUE = '[withheld: monitors are blinded to treatment in this study]';

/**
 * Field names that name treatment allocation: arm, treatment, randomisation code or number, kit,
 * dose group, allocation, unblinding. Matched on the whole name, case-insensitively, with `-`,
 * `_` and spaces ignored.
 */
const TREATMENT_FIELD =
  /^(treatment(arm|group|code|name)?|(actual|planned|act)?arm(cd|code|name)?|randomi[sz]ation(code|number|id|arm|group)?|kit(number|id|code)?|dose(group|level|arm)|allocation(group|code)?|unblind\w*|blindbreak\w*)$/;

/** Whether a field name names treatment allocation. */
export function isTreatmentField(name: string): boolean {
  return TREATMENT_FIELD.test(name.replace(/[-_\s]/g, '').toLowerCase());
}

/** A value with treatment fields replaced, and the paths that were withheld. */
export interface RedactedValue {
  readonly value: unknown;
  readonly withheld: string[];
}

/** Replaces the value of every treatment field, at any depth, by {@link WITHHELD_VALUE}. */
export function withholdTreatmentFields(value: unknown, path: string): RedactedValue {
  const withheld: string[] = [];
  const walk = (node: unknown, at: string): unknown => {
    if (Array.isArray(node)) return node.map((item, index) => walk(item, `${at}[${index}]`));
    if (node === null || typeof node !== 'object') return node;
    const copy: Record<string, unknown> = {};
    for (const [key, child] of Object.entries(node)) {
      const childPath = `${at}.${key}`;
      if (isTreatmentField(key)) {
        copy[key] = WITHHELD_VALUE;
        withheld.push(childPath);
      } else {
        copy[key] = walk(child, childPath);
      }
    }
    return copy;
  };
  return { value: walk(value, path), withheld };
}
