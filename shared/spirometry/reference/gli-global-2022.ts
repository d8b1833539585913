import type { ReferenceParameter } from '../model.js';
import { type GliDefinition, type GliLookupSet, createGliEquations } from './gli-tables.js';
import type { ReferenceEquations } from './reference-equations.js';

/** GLI Global publishes FEV1, FVC and FEV1/FVC (Bowerman 2023). */
export const GLI_GLOBAL_2022_PARAMETERS: readonly ReferenceParameter[] = ['fev1', 'fvc', 'fev1Fvc'];

/** GLI Global: race-neutral, so no ethnic terms; ages 3-95 like GLI-2012. */
export const GLI_GLOBAL_2022_DEFINITION: GliDefinition = {
  id: 'gli-global-2022',
  label: 'GLI Global 2022',
  source:
    'Bowerman C, Bhakta NR, Brazzale D, et al. A race-neutral approach to the interpretation of lung function ' +
    'measurements. Am J Respir Crit Care Med 2023;207(6):768-774',
  parameters: GLI_GLOBAL_2022_PARAMETERS,
  ageRangeYears: { fev1: [3, 95], fvc: [3, 95], fev1Fvc: [3, 95] },
  ethnicities: null,
};

/** GLI Global equations over an imported lookup set; any ethnicity given is ignored. */
export function createGliGlobal2022Equations(lookup: GliLookupSet): ReferenceEquations {
  return createGliEquations(GLI_GLOBAL_2022_DEFINITION, lookup);
}
