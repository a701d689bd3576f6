/**
 * The standard normal distribution: quantile by Wichura's AS 241 (PPND16, Applied Statistics
 * 37 (1988) 477–484, relative accuracy about 1e-16) and distribution function through
 * W. J. Cody's rational Chebyshev approximations of erf and exp(y²)·erfc(y) (Math. Comp. 23
 * (1969) 631–637; coefficients of his CALERF routine, netlib specfun, 1990).
 */

// AS 241, region |p − 1/2| ≤ 0.425: z = q·A(r)/B(r), r = 0.180625 − q².
const A = [3.387132872796366608, 133.14166789178437745, 1971.5909503065514427, 13731.693765509461125,
  45921.953931549871457, 67265.770927008700853, 33430.575583588128105, 2509.0809287301226727];
const B = [1, 42.313330701600911252, 687.1870074920579083, 5394.1960214247511077,
  21213.794301586595867, 39307.89580009271061, 28729.085735721942674, 5226.495278852854561];
// AS 241, tail with r = sqrt(−ln min(p, 1 − p)) ≤ 5: z = C(r − 1.6)/D(r − 1.6).
const C = [1.42343711074968357734, 4.6303378461565452959, 5.7694972214606914055, 3.64784832476320460504,
  1.27045825245236838258, 0.24178072517745061177, 0.0227238449892691845833, 7.7454501427834140764e-4];
const D = [1, 2.05319162663775882187, 1.6763848301838038494, 0.68976733498510000455,
  0.14810397642748007459, 0.0151986665636164571966, 5.475938084995344946e-4, 1.05075007164441684324e-9];
// AS 241, far tail r > 5: z = E(r − 5)/F(r − 5).
const E = [6.6579046435011037772, 5.4637849111641143699, 1.7848265399172913358, 0.29656057182850489123,
  0.026532189526576123093, 0.0012426609473880784386, 2.71155556874348757815e-5, 2.01033439929228813265e-7];
const F = [1, 0.59983220655588793769, 0.13692988092273580531, 0.0148753612908506148525,
  7.868691311456132591e-4, 1.8463183175100546818e-5, 1.4215117583164458887e-7, 2.04426310338993978564e-15];

/** c[0] + c[1]x + … + c[7]x⁷ by Horner's rule. */
function poly7(c: readonly number[], x: number): number {
  return ((((((c[7] * x + c[6]) * x + c[5]) * x + c[4]) * x + c[3]) * x + c[2]) * x + c[1]) * x + c[0];
}

/** Φ⁻¹(p), Wichura's AS 241 (PPND16). p = 0 gives −∞, p = 1 gives +∞, anything else outside [0, 1] NaN. */
export function normalQuantile(p: number): number {
  if (!(p >= 0 && p <= 1)) return Number.NaN;
  const q = p - 0.5;
  if (Math.abs(q) <= 0.425) {
    const r = 0.180625 - q * q;
    return (q * poly7(A, r)) / poly7(B, r);
  }
  const tail = q < 0 ? p : 1 - p;
  if (tail === 0) return q < 0 ? -Infinity : Infinity;
  let r = Math.sqrt(-Math.log(tail));
  let z: number;
  if (r <= 5) {
    r -= 1.6;
    z = poly7(C, r) / poly7(D, r);
  } else {
    r -= 5;
    z = poly7(E, r) / poly7(F, r);
  }
  return q < 0 ? -z : z;
}

// Cody (1969): erf(y) = y·P(y²)/Q(y²) for |y| ≤ 0.46875.
const ERF_P = [3.1611237438705656, 113.864154151050156, 377.485237685302021, 3209.37758913846947, 0.185777706184603153];
const ERF_Q = [23.6012909523441209, 244.024637934444173, 1282.61652607737228, 2844.23683343917062];
// Cody (1969): exp(y²)·erfc(y) = P(y)/Q(y) for 0.46875 < y ≤ 4.
const ERFC_P = [0.564188496988670089, 8.88314979438837594, 66.1191906371416295, 298.635138197400131,
  881.95222124176909, 1712.04761263407058, 2051.07837782607147, 1230.33935479799725, 2.15311535474403846e-8];
const ERFC_Q = [15.7449261107098347, 117.693950891312499, 537.181101862009858, 1621.38957456669019,
  3290.79923573345963, 4362.61909014324716, 3439.36767414372164, 1230.33935480374942];
// Cody (1969): exp(y²)·erfc(y) = (1/√π − y⁻²·P(y⁻²)/Q(y⁻²))/y for y > 4.
const TAIL_P = [0.305326634961232344, 0.360344899949804439, 0.125781726111229246, 0.0160837851487422766,
  6.58749161529837803e-4, 0.0163153871373020978];
const TAIL_Q = [2.56852019228982242, 1.87295284992346047, 0.527905102951428412, 0.0605183413124413191,
  0.00233520497626869185];
const INV_SQRT_PI = 0.56418958354775628695;
const INV_SQRT_2 = 0.70710678118654752440;
const THRESH = 0.46875;

/** erf(y) for |y| ≤ 0.46875 (Cody's first interval). */
function erfSmall(y: number): number {
  const t = y * y;
  let num = ERF_P[4] * t;
  let den = t;
  for (let i = 0; i < 3; i++) {
    num = (num + ERF_P[i]) * t;
    den = (den + ERF_Q[i]) * t;
  }
  return (y * (num + ERF_P[3])) / (den + ERF_Q[3]);
}

/** exp(y²)·erfc(y) for y > 0.46875 (Cody's second and third intervals). */
function erfcScaled(y: number): number {
  if (y <= 4) {
    let num = ERFC_P[8] * y;
    let den = y;
    for (let i = 0; i < 7; i++) {
      num = (num + ERFC_P[i]) * y;
      den = (den + ERFC_Q[i]) * y;
    }
    return (num + ERFC_P[7]) / (den + ERFC_Q[7]);
  }
  const t = 1 / (y * y);
  let num = TAIL_P[5] * t;
  let den = t;
  for (let i = 0; i < 4; i++) {
    num = (num + TAIL_P[i]) * t;
    den = (den + TAIL_Q[i]) * t;
  }
  return (INV_SQRT_PI - (t * (num + TAIL_P[4])) / (den + TAIL_Q[4])) / y;
}

/**
 * exp(−x²/2) to a few ulps for large |x|: x is split as s + d with s = trunc(16x)/16, so s²/2
 * is exact and only the small (x − s)(x + s)/2 carries rounding (Cody's device).
 */
function gaussianFactor(x: number): number {
  const s = Math.trunc(x * 16) / 16;
  return Math.exp(-0.5 * s * s) * Math.exp(-0.5 * (x - s) * (x + s));
}

/**
 * Φ(x) = ½·erfc(−x/√2) on the lower side, 1 − ½·erfc(x/√2) on the upper. The tail is formed
 * as exp(−x²/2)·[exp(y²)erfc(y)]/2 with the exponential taken of x itself, so the rounding of
 * x/√2 only enters the slowly varying scaled factor: relative accuracy holds far into the
 * lower tail (down to the underflow of Φ near x = −38.5).
 */
export function normalCdf(x: number): number {
  if (Number.isNaN(x)) return Number.NaN;
  const y = Math.abs(x) * INV_SQRT_2;
  if (y <= THRESH) return 0.5 + 0.5 * erfSmall(x * INV_SQRT_2);
  if (y >= 27.3) return x < 0 ? 0 : 1; // exp(−x²/2) underflows to 0 beyond |x| ≈ 38.6
  const lower = 0.5 * gaussianFactor(x) * erfcScaled(y); // Φ(−|x|)
  return x < 0 ? lower : 1 - lower;
}
