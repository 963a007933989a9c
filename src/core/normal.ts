/**
 * The standard normal distribution: density, distribution function (both tails with full
 * relative precision) and its inverse.
 *
 * Methods (published; coefficients checked against several independently published copies of the
 * original tables):
 *
 * - Φ: W. J. Cody, "Rational Chebyshev approximations for the error function", Math. Comp. 23
 *   (1969) 631–637, in the form of the ANORM routine of Cody's SPECFUN package (ACM TOMS
 *   Algorithm 715, 1993). Three ranges: |z| ≤ 0.67448975 (Φ − ½ as z·R(z²)),
 *   0.67448975 < |z| ≤ √32 (Φ(−|z|) = e^{−z²/2} R(|z|)), and |z| > √32 (Φ(−|z|) =
 *   e^{−z²/2}/|z| · (1/√(2π) − R(1/z²)/z²), the Mills-ratio form). The rational functions are
 *   accurate to about 1e−16 relative; in the far tail e^{−z²/2} is split as
 *   e^{−zₕ²/2}·e^{−(z−zₕ)(z+zₕ)/2} with zₕ = z truncated to a multiple of 1/16 (so zₕ² is exact),
 *   which keeps the rounding of z² from being amplified by the exponential.
 *   The upper tail is computed as 1 − Φ(−z) for z > 0, never as ½(1 + erf(z/√2)).
 * - Φ⁻¹: M. J. Wichura, "Algorithm AS 241: The percentage points of the normal distribution",
 *   Applied Statistics 37 (1988) 477–484, PPND16 (about 1e−16 relative), with one Halley step on
 *   Φ in the tails (|p − ½| > 0.425).
 */

const INV_SQRT_2PI = 0.398942280401432677939946059934;
const SQRT_32 = 5.656854249492380195206754896838;
/** Φ⁻¹(3/4), the end of Cody's central range. */
const CENTRAL = 0.67448975;

// Cody, central range |z| ≤ 0.67448975: Φ(z) − ½ = z·(a-poly in z²)/(b-poly in z²)
const A0 = 2.2352520354606839287;
const A1 = 161.02823106855587881;
const A2 = 1067.6894854603709582;
const A3 = 18154.981253343561249;
const A4 = 0.065682337918207449113;
const B0 = 47.20258190468824187;
const B1 = 976.09855173777669322;
const B2 = 10260.932208618978205;
const B3 = 45507.789335026729956;

// Cody, 0.67448975 < |z| ≤ √32: Φ(−|z|) = e^{−z²/2}·(c-poly)/(d-poly) in |z|
const C0 = 0.39894151208813466764;
const C1 = 8.8831497943883759412;
const C2 = 93.506656132177855979;
const C3 = 597.27027639480026226;
const C4 = 2494.5375852903726711;
const C5 = 6848.1904505362823326;
const C6 = 11602.651437647350124;
const C7 = 9842.7148383839780218;
const C8 = 1.0765576773720192317e-8;
const D0 = 22.266688044328115691;
const D1 = 235.38790178262499861;
const D2 = 1519.377599407554805;
const D3 = 6485.558298266760755;
const D4 = 18615.571640885098091;
const D5 = 34900.952721145977266;
const D6 = 38912.003286093271411;
const D7 = 19685.429676859990727;

// Cody, |z| > √32: Mills-ratio form in 1/z²
const P0 = 0.21589853405795699;
const P1 = 0.1274011611602473639;
const P2 = 0.022235277870649807;
const P3 = 0.001421619193227893466;
const P4 = 2.9112874951168792e-5;
const P5 = 0.02307344176494017303;
const Q0 = 1.28426009614491121;
const Q1 = 0.468238212480865118;
const Q2 = 0.0659881378689285515;
const Q3 = 0.00378239633202758244;
const Q4 = 7.29751555083966205e-5;

/** Beyond this |z| the lower tail is below the smallest subnormal double (Φ(−38.5) ≈ 1e−324). */
const FAR = 40;

/** e^{−y²/2} with full relative precision for large y (split so the square is exact). */
function expHalfSquareSplit(y: number): number {
  const h = Math.trunc(y * 16) / 16;
  const del = (y - h) * (y + h);
  return Math.exp(-0.5 * h * h) * Math.exp(-0.5 * del);
}

const SQRT_2PI = 2.506628274631000502415765284811;

/**
 * Mills ratio Φ(−y)/φ(y) for y > 0.67448975 (any y up to +Infinity), from Cody's rational
 * functions without any exponential. (Written as single Horner expressions and split by range
 * so that V8 inlines the common range into the pricing loops.)
 */
function millsTail(y: number): number {
  if (y <= SQRT_32) {
    return (
      (SQRT_2PI * ((((((((C8 * y + C0) * y + C1) * y + C2) * y + C3) * y + C4) * y + C5) * y + C6) * y + C7)) /
      ((((((((y + D0) * y + D1) * y + D2) * y + D3) * y + D4) * y + D5) * y + D6) * y + D7)
    );
  }
  return millsFar(y);
}

/** Cody's Mills-ratio form for y > √32, in powers of 1/y². */
function millsFar(y: number): number {
  const s = 1 / (y * y);
  const r = (s * (((((P5 * s + P0) * s + P1) * s + P2) * s + P3) * s + P4)) / (((((s + Q0) * s + Q1) * s + Q2) * s + Q3) * s + Q4);
  return (1 - SQRT_2PI * r) / y;
}

/** Φ(z) − ½ on Cody's central range |z| ≤ 0.67448975. */
function centralHalf(z: number): number {
  const s = z * z;
  return (z * ((((A4 * s + A0) * s + A1) * s + A2) * s + A3)) / ((((s + B0) * s + B1) * s + B2) * s + B3);
}

/** Standard normal density φ(z) = e^{−z²/2}/√(2π). */
export function normPdf(z: number): number {
  const y = Math.abs(z);
  if (y <= SQRT_32) return INV_SQRT_2PI * Math.exp(-0.5 * z * z);
  if (y <= FAR) return INV_SQRT_2PI * expHalfSquareSplit(y);
  return y > FAR ? 0 : NaN;
}

/**
 * Standard normal distribution function Φ(z) = P(Z ≤ z). Relative error about 1e−15 in both
 * tails (the left tail down to the underflow of doubles near z = −38.5; 0 below, 1 above
 * z = 8.3 where 1 − Φ rounds away). NaN in, NaN out.
 */
export function normCdf(z: number): number {
  const y = Math.abs(z);
  if (y <= CENTRAL) return 0.5 + centralHalf(z);
  const t = normPdf(y) * millsTail(y);
  return z < 0 ? t : 1 - t;
}

/**
 * Φ(z) when φ(z) is already known (`pdf` must be normPdf(z) or equal to it within rounding):
 * saves the exponential in inner loops that need both. Same precision as normCdf.
 */
export function normCdfWithPdf(z: number, pdf: number): number {
  const y = Math.abs(z);
  if (y <= CENTRAL) return 0.5 + centralHalf(z);
  const t = pdf * millsTail(y);
  return z < 0 ? t : 1 - t;
}

/**
 * Φ(z) − ½ with full relative precision near z = 0 (where Φ(z) − 0.5 would lose digits); for
 * |z| beyond Cody's central range it is ±(½ − Φ(−|z|)), which has no cancellation either.
 */
export function normCdfMinusHalf(z: number): number {
  const y = Math.abs(z);
  if (y <= CENTRAL) return centralHalf(z);
  const h = 0.5 - normPdf(y) * millsTail(y);
  return z < 0 ? -h : h;
}

/**
 * Mills ratio Φ(−u)/φ(u) for u ≥ 0 (also fine for moderately negative u, down to about −37).
 * For u > 0.6745 no exponential is evaluated, so it stays exact where Φ(−u) and φ(u) underflow;
 * used to work with logarithms of tiny option prices.
 */
export function normMills(u: number): number {
  if (u > CENTRAL) return millsTail(u);
  return (0.5 - centralHalf(u)) * SQRT_2PI * Math.exp(0.5 * u * u);
}

/** Upper tail 1 − Φ(z) = Φ(−z), with full relative precision for large positive z. */
export function normCdfUpper(z: number): number {
  return normCdf(-z);
}

// Wichura AS 241 (PPND16)
const WA0 = 3.387132872796366608;
const WA1 = 133.14166789178437745;
const WA2 = 1971.5909503065514427;
const WA3 = 13731.693765509461125;
const WA4 = 45921.953931549871457;
const WA5 = 67265.770927008700853;
const WA6 = 33430.575583588128105;
const WA7 = 2509.0809287301226727;
const WB1 = 42.313330701600911252;
const WB2 = 687.1870074920579083;
const WB3 = 5394.1960214247511077;
const WB4 = 21213.794301586595867;
const WB5 = 39307.89580009271061;
const WB6 = 28729.085735721942674;
const WB7 = 5226.495278852854561;
const WC0 = 1.42343711074968357734;
const WC1 = 4.6303378461565452959;
const WC2 = 5.7694972214606914055;
const WC3 = 3.64784832476320460504;
const WC4 = 1.27045825245236838258;
const WC5 = 0.24178072517745061177;
const WC6 = 0.0227238449892691845833;
const WC7 = 7.7454501427834140764e-4;
const WD1 = 2.05319162663775882187;
const WD2 = 1.6763848301838038494;
const WD3 = 0.68976733498510000455;
const WD4 = 0.14810397642748007459;
const WD5 = 0.0151986665636164571966;
const WD6 = 5.475938084995344946e-4;
const WD7 = 1.05075007164441684324e-9;
const WE0 = 6.6579046435011037772;
const WE1 = 5.4637849111641143699;
const WE2 = 1.7848265399172913358;
const WE3 = 0.29656057182850489123;
const WE4 = 0.026532189526576123093;
const WE5 = 0.0012426609473880784386;
const WE6 = 2.71155556874348757815e-5;
const WE7 = 2.01033439929228813265e-7;
const WF1 = 0.59983220655588793769;
const WF2 = 0.13692988092273580531;
const WF3 = 0.0148753612908506148525;
const WF4 = 7.868691311456132591e-4;
const WF5 = 1.8463183175100546818e-5;
const WF6 = 1.4215117583164458887e-7;
const WF7 = 2.04426310338993978564e-15;

/**
 * Inverse of Φ: the z with Φ(z) = p, for 0 < p < 1 (Wichura AS 241, about 1e−16 relative in
 * both tails). Edge values: normInv(0) = −Infinity and normInv(1) = +Infinity, and p outside
 * [0, 1] or NaN gives NaN; callers that print must not pass those (Kolmo's callers keep p
 * strictly inside (0, 1)).
 */
export function normInv(p: number): number {
  if (!(p > 0 && p < 1)) {
    if (p === 0) return -Infinity;
    if (p === 1) return Infinity;
    return NaN;
  }
  const q = p - 0.5;
  if (Math.abs(q) <= 0.425) {
    const r = 0.180625 - q * q;
    return (
      (q *
        (((((((WA7 * r + WA6) * r + WA5) * r + WA4) * r + WA3) * r + WA2) * r + WA1) * r + WA0)) /
      (((((((WB7 * r + WB6) * r + WB5) * r + WB4) * r + WB3) * r + WB2) * r + WB1) * r + 1)
    );
  }
  const tail = q < 0 ? p : 1 - p; // exact for p > ½
  let r = Math.sqrt(-Math.log(tail));
  let x: number;
  if (r <= 5) {
    r -= 1.6;
    x =
      (((((((WC7 * r + WC6) * r + WC5) * r + WC4) * r + WC3) * r + WC2) * r + WC1) * r + WC0) /
      (((((((WD7 * r + WD6) * r + WD5) * r + WD4) * r + WD3) * r + WD2) * r + WD1) * r + 1);
  } else {
    r -= 5;
    x =
      (((((((WE7 * r + WE6) * r + WE5) * r + WE4) * r + WE3) * r + WE2) * r + WE1) * r + WE0) /
      (((((((WF7 * r + WF6) * r + WF5) * r + WF4) * r + WF3) * r + WF2) * r + WF1) * r + 1);
  }
  // One Halley step on Φ(−x) = tail (Φ has full relative precision there, and the step is
  // well conditioned: an error ε in Φ moves z by only ε/|z|), taking AS 241's few ulps in the
  // tails down to about one.
  if (tail > 1e-300) {
    const z = -x;
    const u = (normCdf(z) - tail) / normPdf(z);
    x = -(z - u / (1 + 0.5 * z * u));
  }
  return q < 0 ? -x : x;
}
