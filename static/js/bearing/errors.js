// Mirrors sitecheck/bearing/errors.py: the one error the engineering core raises.

import { pyStr } from "./format.js";

// An input that makes no physical sense, or that no coded formula covers. `field` is a
// dotted path into the input ("padstone.length"), `code` a stable slug the screens match
// on, `expected` a sentence saying what would have been accepted.
export class InputError extends Error {
  constructor(field, value, expected, code = "invalid") {
    super(`${field} = ${repr(value)}: ${expected}`);
    this.name = "InputError";
    this.field = field;
    this.value = value === undefined ? null : value;
    this.expected = expected;
    this.code = code;
  }

  // The same object as Python's InputError.as_dict().
  asDict() {
    return { field: this.field, value: this.value, expected: this.expected, code: this.code };
  }
}

// Close to Python's repr() for the values an input holds; only the message uses it.
function repr(value) {
  if (typeof value === "string") return `'${value}'`;
  if (typeof value === "number" && Number.isInteger(value)) return String(value);
  if (typeof value === "object" && value !== null) return JSON.stringify(value);
  return pyStr(value);
}
