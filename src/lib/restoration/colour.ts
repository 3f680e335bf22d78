/**
 * Colour science used by the restoration engine: sRGB transfer (IEC 61966-2-1:1999),
 * sRGB <-> CIE XYZ (D65), CIELAB (CIE 15:2004), CIEDE2000 (CIE 142-2001, as written up by
 * Sharma, Wu & Dalal 2005) and reflection density (ISO 5).
 *
 * Pure TypeScript: imported by the server render and the browser preview alike.
 */

export type Triplet = [number, number, number];

/** sRGB transfer function, decode (IEC 61966-2-1): encoded value 0..1 -> linear light 0..1. */
export function srgbDecode(v: number): number {
  return v <= 0.04045 ? v / 12.92 : Math.pow((v + 0.055) / 1.055, 2.4);
}

/** sRGB transfer function, encode (IEC 61966-2-1): linear light 0..1 -> encoded value 0..1. */
export function srgbEncode(l: number): number {
  return l <= 0.0031308 ? 12.92 * l : 1.055 * Math.pow(l, 1 / 2.4) - 0.055;
}

/** IEC 61966-2-1 sRGB (linear) -> XYZ matrix, 4-decimal form as printed in the standard. */
export const SRGB_TO_XYZ: readonly Triplet[] = [
  [0.4124, 0.3576, 0.1805],
  [0.2126, 0.7152, 0.0722],
  [0.0193, 0.1192, 0.9505],
];

/**
 * D65 white as the row sums of {@link SRGB_TO_XYZ}. Using the white that belongs to the matrix
 * (rather than one computed from chromaticity) keeps sRGB white at a* = b* = 0 exactly; the
 * xy-derived white would put it at a* = 0.0077.
 */
export const D65_WHITE: Triplet = [
  SRGB_TO_XYZ[0][0] + SRGB_TO_XYZ[0][1] + SRGB_TO_XYZ[0][2],
  SRGB_TO_XYZ[1][0] + SRGB_TO_XYZ[1][1] + SRGB_TO_XYZ[1][2],
  SRGB_TO_XYZ[2][0] + SRGB_TO_XYZ[2][1] + SRGB_TO_XYZ[2][2],
];

function invert3(m: readonly Triplet[]): Triplet[] {
  const [[a, b, c], [d, e, f], [g, h, i]] = m;
  const A = e * i - f * h;
  const B = -(d * i - f * g);
  const C = d * h - e * g;
  const det = a * A + b * B + c * C;
  return [
    [A / det, -(b * i - c * h) / det, (b * f - c * e) / det],
    [B / det, (a * i - c * g) / det, -(a * f - c * d) / det],
    [C / det, -(a * h - b * g) / det, (a * e - b * d) / det],
  ];
}

/** Exact inverse of {@link SRGB_TO_XYZ}, so a round trip returns the input. */
export const XYZ_TO_SRGB: readonly Triplet[] = invert3(SRGB_TO_XYZ);

function mul(m: readonly Triplet[], v: readonly number[]): Triplet {
  return [
    m[0][0] * v[0] + m[0][1] * v[1] + m[0][2] * v[2],
    m[1][0] * v[0] + m[1][1] * v[1] + m[1][2] * v[2],
    m[2][0] * v[0] + m[2][1] * v[1] + m[2][2] * v[2],
  ];
}

/** Linear-light sRGB (0..1) -> XYZ (D65, Y of white = 1). */
export function linearSrgbToXyz(rgb: readonly number[]): Triplet {
  return mul(SRGB_TO_XYZ, rgb);
}

/** XYZ (D65) -> linear-light sRGB, unclipped. */
export function xyzToLinearSrgb(xyz: readonly number[]): Triplet {
  return mul(XYZ_TO_SRGB, xyz);
}

/** Encoded sRGB (0..1) -> XYZ (D65). */
export function srgbToXyz(rgb: readonly number[]): Triplet {
  return linearSrgbToXyz([srgbDecode(rgb[0]), srgbDecode(rgb[1]), srgbDecode(rgb[2])]);
}

const LAB_EPSILON = 216 / 24389;
const LAB_KAPPA = 24389 / 27;

/** XYZ -> CIELAB against the given reference white (CIE 15:2004, exact ε and κ). */
export function xyzToLab(xyz: readonly number[], white: readonly number[] = D65_WHITE): Triplet {
  const f = (t: number) => (t > LAB_EPSILON ? Math.cbrt(t) : (LAB_KAPPA * t + 16) / 116);
  const fx = f(xyz[0] / white[0]);
  const fy = f(xyz[1] / white[1]);
  const fz = f(xyz[2] / white[2]);
  return [116 * fy - 16, 500 * (fx - fy), 200 * (fy - fz)];
}

/** Encoded sRGB (0..1) -> CIELAB with the D65 white of the sRGB matrix. */
export function srgbToLab(rgb: readonly number[]): Triplet {
  return xyzToLab(srgbToXyz(rgb), D65_WHITE);
}

const DEG = Math.PI / 180;
const POW25_7 = Math.pow(25, 7);

/**
 * CIEDE2000 colour difference (kL = kC = kH = 1), following the implementation notes of
 * Sharma, Wu & Dalal, Color Res. Appl. 30(1), 2005 (hue-angle and mean-hue conventions included).
 */
export function deltaE2000(lab1: readonly number[], lab2: readonly number[]): number {
  const [L1, a1, b1] = lab1;
  const [L2, a2, b2] = lab2;
  const C1 = Math.hypot(a1, b1);
  const C2 = Math.hypot(a2, b2);
  const Cbar7 = Math.pow((C1 + C2) / 2, 7);
  const G = 0.5 * (1 - Math.sqrt(Cbar7 / (Cbar7 + POW25_7)));
  const a1p = (1 + G) * a1;
  const a2p = (1 + G) * a2;
  const C1p = Math.hypot(a1p, b1);
  const C2p = Math.hypot(a2p, b2);
  const hue = (b: number, a: number) => {
    if (a === 0 && b === 0) return 0;
    const h = Math.atan2(b, a) / DEG;
    return h < 0 ? h + 360 : h;
  };
  const h1p = hue(b1, a1p);
  const h2p = hue(b2, a2p);

  const dLp = L2 - L1;
  const dCp = C2p - C1p;
  let dhp = 0;
  if (C1p * C2p !== 0) {
    dhp = h2p - h1p;
    if (dhp > 180) dhp -= 360;
    else if (dhp < -180) dhp += 360;
  }
  const dHp = 2 * Math.sqrt(C1p * C2p) * Math.sin((dhp / 2) * DEG);

  const Lbarp = (L1 + L2) / 2;
  const Cbarp = (C1p + C2p) / 2;
  let hbarp = h1p + h2p;
  if (C1p * C2p !== 0) {
    if (Math.abs(h1p - h2p) <= 180) hbarp = (h1p + h2p) / 2;
    else if (h1p + h2p < 360) hbarp = (h1p + h2p + 360) / 2;
    else hbarp = (h1p + h2p - 360) / 2;
  }
  const T =
    1 -
    0.17 * Math.cos((hbarp - 30) * DEG) +
    0.24 * Math.cos(2 * hbarp * DEG) +
    0.32 * Math.cos((3 * hbarp + 6) * DEG) -
    0.2 * Math.cos((4 * hbarp - 63) * DEG);
  const dTheta = 30 * Math.exp(-Math.pow((hbarp - 275) / 25, 2));
  const Cbarp7 = Math.pow(Cbarp, 7);
  const RC = 2 * Math.sqrt(Cbarp7 / (Cbarp7 + POW25_7));
  const Lm50sq = Math.pow(Lbarp - 50, 2);
  const SL = 1 + (0.015 * Lm50sq) / Math.sqrt(20 + Lm50sq);
  const SC = 1 + 0.045 * Cbarp;
  const SH = 1 + 0.015 * Cbarp * T;
  const RT = -Math.sin(2 * dTheta * DEG) * RC;
  const tL = dLp / SL;
  const tC = dCp / SC;
  const tH = dHp / SH;
  return Math.sqrt(tL * tL + tC * tC + tH * tH + RT * tC * tH);
}

/**
 * Lowest reflectance we let into density arithmetic. A print's maximum density is about
 * 2.0-2.5 (from memory), and scan noise near black would otherwise send -log10 to infinity.
 */
export const MIN_REFLECTANCE = Math.pow(10, -3);

/** Reflection density, ISO 5: D = -log10(reflectance factor), reflectance floored at {@link MIN_REFLECTANCE}. */
export function densityFromReflectance(r: number): number {
  return -Math.log10(Math.max(r, MIN_REFLECTANCE));
}

/** Inverse of {@link densityFromReflectance}: reflectance = 10^-D. */
export function reflectanceFromDensity(d: number): number {
  return Math.pow(10, -d);
}
