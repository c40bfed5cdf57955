/**
 * Spendmix's own segment palette. Chosen by a greedy search over sRGB (moderate lightness and
 * chroma so it stays calm) that maximises the smallest CIEDE2000 difference between any two
 * colours under normal vision and simulated protanopia, deuteranopia and tritanopia;
 * test/renderer/palette.test.ts keeps it that way. Segment i is always colour i, in every chart,
 * card and table; beyond eight segments colours repeat with a different marker shape.
 */
export const segmentColours = [
  '#33669a', // deep blue
  '#eeaa55', // apricot
  '#775522', // walnut
  '#99bbff', // sky
  '#dd5566', // rose
  '#229999', // teal
  '#9977dd', // lilac
  '#997700', // ochre
] as const;

/** Scatter marker shapes, a second cue beside colour for readers who cannot rely on hue. */
export const segmentSymbols = ['circle', 'rect', 'triangle', 'diamond', 'roundRect', 'pin', 'arrow', 'emptyCircle'] as const;

export function segmentColour(index: number): string {
  if (!Number.isInteger(index) || index < 0) throw new RangeError(`Segment index must be a non-negative integer, got ${index}.`);
  return segmentColours[index % segmentColours.length];
}

export function segmentSymbol(index: number): string {
  if (!Number.isInteger(index) || index < 0) throw new RangeError(`Segment index must be a non-negative integer, got ${index}.`);
  // Shapes advance every full turn of the colours too, so colour + shape stays unique up to 64.
  const turn = Math.floor(index / segmentColours.length);
  return segmentSymbols[(index + turn) % segmentSymbols.length];
}

/** Interface colours shared by the stylesheet and the charts. */
export const ui = {
  page: '#f6f5f1',
  panel: '#ffffff',
  ink: '#1f2a30',
  inkSoft: '#55636b',
  rule: '#dcd9d0',
  gridLine: '#ebe8e0',
  accent: '#2c5d73',
  warn: '#8a4b00',
  /** Heatmap ramp from empty to full, single hue so it reads in any colour vision. */
  rampLow: '#f2f0ea',
  rampHigh: '#1f4f66',
} as const;
