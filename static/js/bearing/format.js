// Numbers into text exactly as Python's format() writes them (no Python module: this is the
// part of CPython the core's f-strings lean on).
//
// Python rounds the exact binary value half to even; JavaScript's toFixed and toPrecision
// round an exact tie away from zero (2.5 -> "3", 1000.125 -> "1000.13" where Python writes
// "2" and "1000.12"). The phone must print the same messages and notes as the server, so
// every number the core puts into text goes through formatG or formatFixed, which work
// on the exact decimal expansion of the double with BigInt.

const VIEW = new DataView(new ArrayBuffer(8));

// The exact value of a finite, positive double as digits × 10^-scale (digits a BigInt).
function exactDecimal(x) {
  VIEW.setFloat64(0, x);
  const hi = VIEW.getUint32(0);
  const lo = VIEW.getUint32(4);
  let exponent = (hi >>> 20) & 0x7ff;
  let mantissa = (BigInt(hi & 0xfffff) << 32n) | BigInt(lo);
  if (exponent === 0) exponent = 1;
  else mantissa |= 1n << 52n;
  exponent -= 1075; // x = mantissa × 2^exponent
  if (exponent >= 0) return { digits: mantissa << BigInt(exponent), scale: 0 };
  // m / 2^k = m · 5^k / 10^k
  return { digits: mantissa * 5n ** BigInt(-exponent), scale: -exponent };
}

// round(x × 10^places) with ties to even, on the exact value; x finite and positive.
function scaledRound(exact, places) {
  const shift = places - exact.scale;
  if (shift >= 0) return exact.digits * 10n ** BigInt(shift);
  const divisor = 10n ** BigInt(-shift);
  const q = exact.digits / divisor;
  const twice = 2n * (exact.digits % divisor);
  if (twice > divisor || (twice === divisor && q % 2n === 1n)) return q + 1n;
  return q;
}

function signOf(x) {
  return x < 0 || Object.is(x, -0) ? "-" : "";
}

function special(x) {
  if (Number.isNaN(x)) return "nan";
  if (x === Infinity) return "inf";
  if (x === -Infinity) return "-inf";
  return null;
}

// Python's format(x, "g") (precision 6 unless given): `{x:g}` in an f-string.
export function formatG(x, precision = 6) {
  x = Number(x);
  const odd = special(x);
  if (odd !== null) return odd;
  if (x === 0) return `${signOf(x)}0`;
  const p = precision === 0 ? 1 : precision;
  // Whole numbers below 10^p print the same in both languages and are the common case.
  if (Number.isInteger(x) && Math.abs(x) < 10 ** p) return String(x);
  const exact = exactDecimal(Math.abs(x));
  let exp10 = exact.digits.toString().length - 1 - exact.scale;
  let kept = scaledRound(exact, p - 1 - exp10);
  if (kept.toString().length > p) {
    // rounded up to the next power of ten: 999999.5 -> 1e+06
    exp10 += 1;
    kept /= 10n;
  }
  const digits = kept.toString();
  let body;
  if (exp10 >= -4 && exp10 < p) {
    const decimals = p - 1 - exp10;
    body = placePoint(digits, decimals);
  } else {
    let mantissa = digits.length > 1 ? `${digits[0]}.${digits.slice(1)}` : digits;
    mantissa = stripZeros(mantissa);
    const e = Math.abs(exp10);
    body = `${mantissa}e${exp10 < 0 ? "-" : "+"}${e < 10 ? "0" : ""}${e}`;
  }
  return signOf(x) + body;
}

// `digits` is round(|x| × 10^decimals); write it with its point, trailing zeros dropped.
function placePoint(digits, decimals) {
  if (decimals <= 0) return digits + "0".repeat(-decimals);
  const padded = digits.padStart(decimals + 1, "0");
  const whole = padded.slice(0, padded.length - decimals);
  return stripZeros(`${whole}.${padded.slice(padded.length - decimals)}`);
}

function stripZeros(text) {
  if (!text.includes(".")) return text;
  return text.replace(/0+$/, "").replace(/\.$/, "");
}

// Python's format(x, ".Nf"): `{x:.1f}` in an f-string.
export function formatFixed(x, decimals) {
  x = Number(x);
  const odd = special(x);
  if (odd !== null) return odd;
  const sign = signOf(x);
  if (x === 0) return sign + (decimals > 0 ? `0.${"0".repeat(decimals)}` : "0");
  const digits = scaledRound(exactDecimal(Math.abs(x)), decimals).toString();
  if (decimals === 0) return sign + digits;
  const padded = digits.padStart(decimals + 1, "0");
  const cut = padded.length - decimals;
  return `${sign}${padded.slice(0, cut)}.${padded.slice(cut)}`;
}

// Python's str() of a value inside an f-string without a format spec, for the values the
// core writes that way (whole numbers, text). A float that is whole prints with ".0" in
// Python; the core never writes one such, and JSON cannot tell 1 from 1.0 anyway.
export function pyStr(value) {
  if (value === null || value === undefined) return "None";
  if (value === true) return "True";
  if (value === false) return "False";
  return String(value);
}

// ---------------------------------------------------------------- the one formatter
// Mirrors sitecheck/bearing/format.py: every number in a trace, table, message or hint.
// At most four significant figures but every whole digit, commas between thousands, never
// an exponent; forces in kN and line loads in kN/m.

export const SIGNIFICANT = 4;
const SHOWN = { N: ["kN", 1000.0], "N/mm": ["kN/m", 1.0] };
export const NO_CAPACITY = "no capacity (fails)";

// The decimal exponent of |x| once rounded to `p` significant figures (Python's
// format(x, ".{p-1}e")): 9.9996 to four figures is 10.00, exponent 1.
function roundedExponent(a, p) {
  const exact = exactDecimal(a);
  let exp10 = exact.digits.toString().length - 1 - exact.scale;
  const kept = scaledRound(exact, p - 1 - exp10);
  if (kept.toString().length > p) exp10 += 1;
  return exp10;
}

export function number(x, plus = false) {
  x = Number(x);
  if (Number.isNaN(x)) return "NaN";
  if (x === Infinity) return "∞";
  if (x === -Infinity) return "-∞";
  if (x === 0) return "0";
  const a = Math.abs(x);
  const decimals = Math.max(0, SIGNIFICANT - 1 - roundedExponent(a, SIGNIFICANT));
  let text = formatFixed(a, decimals);
  if (text.includes(".")) text = text.replace(/0+$/, "").replace(/\.$/, "");
  const [whole, fraction] = text.split(".");
  text = whole.replace(/\B(?=(\d{3})+(?!\d))/g, ",") + (fraction === undefined ? "" : `.${fraction}`);
  return (x < 0 ? "-" : plus ? "+" : "") + text;
}

export function shownUnit(unit) {
  return Object.hasOwn(SHOWN, unit) ? SHOWN[unit][0] : unit;
}

// A value with its unit as a person reads it: quantity(60000, "N") is "60 kN". Text passes
// through; null is a dash.
export function quantity(x, unit = "") {
  if (x === null || x === undefined) return "—";
  if (typeof x === "boolean") return x ? "yes" : "no";
  if (typeof x === "string") return `${x} ${unit}`.trim();
  const [shown, divisor] = Object.hasOwn(SHOWN, unit) ? SHOWN[unit] : [unit, 1.0];
  const value = divisor !== 1.0 ? Number(x) / divisor : Number(x);
  return `${number(value)} ${shown}`.trim();
}

// A utilisation to two decimals; no capacity at all is a failure and says so.
export function utilisationText(u) {
  if (u === null || u === undefined || !Number.isFinite(u)) return NO_CAPACITY;
  return formatFixed(u, 2);
}
