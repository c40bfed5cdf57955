import { describe, expect, it } from 'vitest';
import { segmentColour, segmentColours, segmentSymbol, ui } from '../../renderer/src/lib/palette.js';
import { ciede2000, parseHex, rgbToLab, simulateVision, smallestDifference, type Vision } from './support/colour-vision.js';

const visions: Vision[] = ['normal', 'protanopia', 'deuteranopia', 'tritanopia'];

describe('colour science used by the palette check', () => {
  it('CIEDE2000 matches the published test pairs', () => {
    // Sharma, Wu & Dalal 2005, supplementary test data, pairs 1 and 7 (from memory).
    expect(ciede2000([50, 2.6772, -79.7751], [50, 0, -82.7485])).toBeCloseTo(2.0425, 4);
    expect(ciede2000([50, 0, 0], [50, -1, 2])).toBeCloseTo(2.3669, 4);
    // Pair 17 of the same table (from memory): a large hue difference.
    expect(ciede2000([50, 2.5, 0], [73, 25, -18])).toBeCloseTo(27.1492, 3);
  });

  it('sRGB white maps to L* = 100 and black to 0 (CIE 15, common practice)', () => {
    expect(rgbToLab([255, 255, 255])[0]).toBeCloseTo(100, 3);
    expect(rgbToLab([0, 0, 0])[0]).toBeCloseTo(0, 6);
  });

  it('the dichromacy matrices leave greys grey (rows of Machado et al. 2009 sum to 1)', () => {
    for (const vision of visions) {
      const [r, g, b] = simulateVision([128, 128, 128], vision);
      expect(Math.abs(r - 128)).toBeLessThan(1.5);
      expect(Math.abs(g - 128)).toBeLessThan(1.5);
      expect(Math.abs(b - 128)).toBeLessThan(1.5);
    }
  });

  it('protanopia simulation confuses a red and a green that normal vision tells apart', () => {
    const red = parseHex('#cc4433');
    const green = parseHex('#778800');
    const normal = ciede2000(rgbToLab(red), rgbToLab(green));
    const protan = ciede2000(rgbToLab(simulateVision(red, 'protanopia')), rgbToLab(simulateVision(green, 'protanopia')));
    expect(protan).toBeLessThan(normal / 2);
  });
});

describe('segment palette', () => {
  it('every pair of segment colours stays apart in every colour vision', () => {
    // 12 CIEDE2000 units: clearly distinguishable side by side (common practice treats ~10 as
    // "obviously different" for chart categories).
    for (const vision of visions) expect(smallestDifference(segmentColours, vision)).toBeGreaterThan(12);
  });

  it('every segment colour stands out from the page background in every colour vision', () => {
    for (const vision of visions) {
      const page = rgbToLab(simulateVision(parseHex(ui.page), vision));
      for (const colour of segmentColours) {
        expect(ciede2000(page, rgbToLab(simulateVision(parseHex(colour), vision)))).toBeGreaterThan(20);
      }
    }
  });

  it('colour and shape together stay unique well beyond eight segments', () => {
    const seen = new Set<string>();
    for (let i = 0; i < 64; i++) seen.add(`${segmentColour(i)}/${segmentSymbol(i)}`);
    expect(seen.size).toBe(64);
  });

  it('rejects impossible segment indexes', () => {
    expect(() => segmentColour(-1)).toThrow(RangeError);
    expect(() => segmentColour(1.5)).toThrow(RangeError);
  });
});
