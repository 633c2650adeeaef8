export {
  analyseRefinement,
  observedOrder,
  richardsonExtrapolate,
  SAFETY_FACTOR_OBSERVED,
  SAFETY_FACTOR_TWO_GRIDS,
} from './richardson.js';
export type {
  RefinementSample,
  RefinementOptions,
  RefinementWarning,
  RefinementWarningKind,
  RefinementGrid,
  RefinementResult,
} from './richardson.js';
export { refinementRows, refinementJson, REFINEMENT_COLUMNS } from './output.js';
export type { RefinementRow, RefinementJson, RefinementJsonValue } from './output.js';
