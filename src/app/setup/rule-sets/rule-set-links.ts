/** Where the rule-set pages live; `setup.routes.ts` mounts `RULE_SET_ROUTES` here. */
export const RULE_SETS_URL = '/setup/rule-sets';

/** Router commands of one version's page. */
export function ruleSetLink(id: string, version: number): (string | number)[] {
  return [RULE_SETS_URL, id, 'versions', version];
}

/** Router commands of the compare page (choices go in the query: `from`, `to`). */
export const COMPARE_LINK = [RULE_SETS_URL, 'compare'];

/** Router commands of the replay page. */
export const REPLAY_LINK = [RULE_SETS_URL, 'replay'];
