// Mirrors the server's re-check of one as-built record, sitecheck/services.py recheck():
// the phone's whole flow from what the inspector typed to a provisional verdict with its
// review reasons, with no signal. The server re-runs it in Python on every record it
// receives, and its answer is the one that counts.
//
// recheckRecord returns the object devtools/vectors_review.py record_expectation() writes:
//   as_built      the design with the measured values in place (null if they could not be read)
//   error         the core's refusal as InputError.as_dict(), or null
//   design_result the design's re-check (BearingResult.as_dict())
//   result        the as-built re-check, null when refused
//   reasons       the review reasons (ReviewReason.as_dict()), most serious first
//   blocking      how many of them block release for closing up
// It leaves out what only the server knows (a newer design revision, a clock ahead).

import { basisFromDict, ec6UkNa } from "./basis.js";
import { InputError } from "./errors.js";
import { withDefaults } from "./inputs.js";
import { checkBearing } from "./recheck.js";
import { asBuiltInput, blocking, couldNotMeasure, review } from "./review.js";
import {
  DEFAULT_SETTINGS,
  checklistFromDict,
  measurementsFromDict,
  settingsFromDict,
} from "./serial.js";

// design: the bearing's design input as input_to_dict writes it; measurements and checklist
// as the record holds them; basis: CodeBasis.to_dict() of the site (null: EC6 + UK NA);
// settings: ReviewSettings.as_dict() of the site (null or empty: the defaults);
// whyNotMeasured: for a bearing that could not be measured, its code (review.js UNMEASURABLE).
export function recheckRecord(design, measurements, checklist, basis, settings, whyNotMeasured = null) {
  // services.basis_for and settings_for: a site with none holds the defaults.
  const codeBasis = basis ? basisFromDict(basis) : ec6UkNa();
  const designInput = withDefaults(design);
  const designResult = checkBearing(designInput, codeBasis);
  const out = {
    as_built: null,
    error: null,
    design_result: designResult,
    result: null,
    reasons: [],
    blocking: 0,
  };
  let m;
  let c;
  let built;
  let result;
  let s;
  try {
    m = measurementsFromDict(measurements);
    c = checklistFromDict(checklist);
    if (whyNotMeasured !== null && whyNotMeasured !== undefined) {
      // Nothing built to compare: the design as it stands, and the could-not-measure review.
      s = hasSettings(settings) ? settingsFromDict(settings) : DEFAULT_SETTINGS;
      const reasons = couldNotMeasure(whyNotMeasured, m, c, s);
      return { ...out, as_built: designInput, result: designResult, reasons, blocking: blocking(reasons) };
    }
    built = asBuiltInput(designInput, m);
    out.as_built = built;
    result = checkBearing(built, codeBasis);
    s = hasSettings(settings) ? settingsFromDict(settings) : DEFAULT_SETTINGS;
  } catch (error) {
    if (!(error instanceof InputError)) throw error;
    out.error = error.asDict();
    return out;
  }
  const reasons = review(designInput, designResult, m, c, built, result, codeBasis, s);
  out.result = result;
  out.reasons = reasons;
  out.blocking = blocking(reasons);
  return out;
}

// Python's `if settings`: null and {} both leave the site on the defaults.
function hasSettings(settings) {
  return settings != null && Object.keys(settings).length > 0;
}
