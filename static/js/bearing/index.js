// The browser's mirror of the engineering core (sitecheck/bearing/), held equal to Python
// by the shared vectors in tests/vectors/bearing-vectors.json.
//
// One module per Python module, same structure, names in camelCase; data objects (inputs,
// bases, results, layouts) keep Python's snake_case field names because they are the same
// dicts the server stores and sends. Results support, never replace, a competent
// engineer's judgement.

export {
  BASES,
  BS5628,
  EC6_UK,
  SOURCES,
  basisFromDict,
  basisNamed,
  bs5628,
  ec6UkNa,
} from "./basis.js";
export { InputError } from "./errors.js";
export { formatFixed, formatG } from "./format.js";
export { ACROSS, IN_LINE, withDefaults } from "./inputs.js";
export { checkBearing } from "./recheck.js";
export { INFORMATIVE, RULE, STRENGTH } from "./trace.js";
export { inputErrors, validate } from "./validate.js";
