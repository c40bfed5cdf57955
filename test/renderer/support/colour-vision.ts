/**
 * Colour science used to check the segment palette: sRGB <-> CIELAB, the CIEDE2000 colour
 * difference, and simulation of the three dichromacies.
 *
 * Sources:
 * - sRGB transfer function and the D65 sRGB -> XYZ matrix: IEC 61966-2-1 (from memory).
 * - CIELAB from XYZ with the D65 white point: CIE 15 (from memory).
 * - CIEDE2000: G. Sharma, W. Wu, E. N. Dalal, "The CIEDE2000 color-difference formula:
 *   implementation notes, supplementary test data, and mathematical observations",
 *   Color Research & Application 30(1), 2005 (formula and test pairs from memory).
 * - Dichromacy simulation: G. M. Machado, M. M. Oliveira, L. A. F. Fernandes, "A
 *   physiologically-based model for simulation of color vision deficiency", IEEE TVCG 15(6),
 *   2009, severity 1.0 matrices applied in linear RGB (from memory).
 */

export type Rgb = [number, number, number];
export type Lab = [number, number, number];
export type Vision = 'normal' | 'protanopia' | 'deuteranopia' | 'tritanopia';

export function parseHex(hex: string): Rgb {
  const match = /^#([0-9a-f]{6})$/i.exec(hex);
  if (!match) throw new Error(`Not a #rrggbb colour: ${hex}`);
  const value = Number.parseInt(match[1], 16);
  return [(value >> 16) & 255, (value >> 8) & 255, value & 255];
}

const toLinear = (channel: number): number => {
  const c = channel / 255;
  return c <= 0.04045 ? c / 12.92 : ((c + 0.055) / 1.055) ** 2.4;
};

const fromLinear = (linear: number): number => {
  const c = Math.min(1, Math.max(0, linear));
  const encoded = c <= 0.0031308 ? 12.92 * c : 1.055 * c ** (1 / 2.4) - 0.055;
  return encoded * 255;
};

const machadoMatrices: Record<Exclude<Vision, 'normal'>, number[][]> = {
  protanopia: [
    [0.152286, 1.052583, -0.204868],
    [0.114503, 0.786281, 0.099216],
    [-0.003882, -0.048116, 1.051998],
  ],
  deuteranopia: [
    [0.367322, 0.860646, -0.227968],
    [0.280085, 0.672501, 0.047413],
    [-0.01182, 0.04294, 0.968881],
  ],
  tritanopia: [
    [1.255528, -0.076749, -0.178779],
    [-0.078411, 0.930809, 0.147602],
    [0.004733, 0.691367, 0.3039],
  ],
};

/** How a colour appears to a viewer with the given colour vision (sRGB 0..255 channels). */
export function simulateVision(rgb: Rgb, vision: Vision): Rgb {
  if (vision === 'normal') return rgb;
  const linear = rgb.map(toLinear);
  const m = machadoMatrices[vision];
  return m.map((row) => fromLinear(row[0] * linear[0] + row[1] * linear[1] + row[2] * linear[2])) as Rgb;
}

export function rgbToLab(rgb: Rgb): Lab {
  const [r, g, b] = rgb.map(toLinear);
  const x = (0.4124564 * r + 0.3575761 * g + 0.1804375 * b) / 0.95047;
  const y = 0.2126729 * r + 0.7151522 * g + 0.072175 * b;
  const z = (0.0193339 * r + 0.119192 * g + 0.9503041 * b) / 1.08883;
  const f = (t: number) => (t > 216 / 24389 ? Math.cbrt(t) : (24389 / 27 * t + 16) / 116);
  return [116 * f(y) - 16, 500 * (f(x) - f(y)), 200 * (f(y) - f(z))];
}

/** CIEDE2000 colour difference with kL = kC = kH = 1. */
export function ciede2000(lab1: Lab, lab2: Lab): number {
  const [L1, a1, b1] = lab1;
  const [L2, a2, b2] = lab2;
  const rad = Math.PI / 180;
  const C1 = Math.hypot(a1, b1);
  const C2 = Math.hypot(a2, b2);
  const meanC = (C1 + C2) / 2;
  const G = 0.5 * (1 - Math.sqrt(meanC ** 7 / (meanC ** 7 + 25 ** 7)));
  const a1p = (1 + G) * a1;
  const a2p = (1 + G) * a2;
  const C1p = Math.hypot(a1p, b1);
  const C2p = Math.hypot(a2p, b2);
  const hue = (b: number, a: number) => {
    if (b === 0 && a === 0) return 0;
    const h = Math.atan2(b, a) / rad;
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
  const dHp = 2 * Math.sqrt(C1p * C2p) * Math.sin((dhp / 2) * rad);
  const meanLp = (L1 + L2) / 2;
  const meanCp = (C1p + C2p) / 2;
  let meanHp = h1p + h2p;
  if (C1p * C2p !== 0) {
    if (Math.abs(h1p - h2p) <= 180) meanHp = (h1p + h2p) / 2;
    else meanHp = h1p + h2p < 360 ? (h1p + h2p + 360) / 2 : (h1p + h2p - 360) / 2;
  }
  const T =
    1 -
    0.17 * Math.cos((meanHp - 30) * rad) +
    0.24 * Math.cos(2 * meanHp * rad) +
    0.32 * Math.cos((3 * meanHp + 6) * rad) -
    0.2 * Math.cos((4 * meanHp - 63) * rad);
  const dTheta = 30 * Math.exp(-(((meanHp - 275) / 25) ** 2));
  const Rc = 2 * Math.sqrt(meanCp ** 7 / (meanCp ** 7 + 25 ** 7));
  const Sl = 1 + (0.015 * (meanLp - 50) ** 2) / Math.sqrt(20 + (meanLp - 50) ** 2);
  const Sc = 1 + 0.045 * meanCp;
  const Sh = 1 + 0.015 * meanCp * T;
  const Rt = -Math.sin(2 * dTheta * rad) * Rc;
  return Math.sqrt(
    (dLp / Sl) ** 2 + (dCp / Sc) ** 2 + (dHp / Sh) ** 2 + Rt * (dCp / Sc) * (dHp / Sh),
  );
}

/** Smallest CIEDE2000 difference between any two colours of a palette as seen with `vision`. */
export function smallestDifference(hexes: readonly string[], vision: Vision): number {
  const labs = hexes.map((hex) => rgbToLab(simulateVision(parseHex(hex), vision)));
  let smallest = Infinity;
  for (let i = 0; i < labs.length; i++) {
    for (let j = i + 1; j < labs.length; j++) smallest = Math.min(smallest, ciede2000(labs[i], labs[j]));
  }
  return smallest;
}
