/**
 * Status colours are readable: text against its background and chart marks against white
 * meet the WCAG 2.1 contrast minimums. Formula and limits from W3C, Web Content Accessibility
 * Guidelines 2.1: definitions of "relative luminance" and "contrast ratio"; SC 1.4.3 asks
 * 4.5:1 for normal text, SC 1.4.11 asks 3:1 for graphical objects.
 */
import { describe, expect, it } from 'vitest';
import { STATUS_STYLE, NOT_APPLICABLE } from '../../../src/statuspage/index.ts';

function luminance(hex: string): number {
  const m = /^#([0-9a-f]{2})([0-9a-f]{2})([0-9a-f]{2})$/i.exec(hex);
  if (m === null) throw new Error(`not a #rrggbb colour: ${hex}`);
  const [r, g, b] = [m[1]!, m[2]!, m[3]!].map((h) => {
    const c = parseInt(h, 16) / 255;
    return c <= 0.04045 ? c / 12.92 : ((c + 0.055) / 1.055) ** 2.4;
  });
  return 0.2126 * r! + 0.7152 * g! + 0.0722 * b!;
}

function contrast(a: string, b: string): number {
  const [hi, lo] = [luminance(a), luminance(b)].sort((x, y) => y - x);
  return (hi! + 0.05) / (lo! + 0.05);
}

describe('status palette', () => {
  it('computes contrast as WCAG defines it', () => {
    // Black on white is 21:1 by the definition ((1 + 0.05) / (0 + 0.05)).
    expect(contrast('#000000', '#ffffff')).toBeCloseTo(21, 10);
    // #777777 on white, by hand from the same definitions: channel 119/255 = 0.4667,
    // linear ((0.4667 + 0.055) / 1.055)^2.4 = 0.1845, so (1 + 0.05) / (0.1845 + 0.05) = 4.48.
    expect(contrast('#777777', '#ffffff')).toBeCloseTo(4.48, 2);
  });

  for (const [status, s] of Object.entries(STATUS_STYLE)) {
    it(`${status}: text on its background and on white is at least 4.5:1; the mark on white at least 3:1`, () => {
      expect(contrast(s.text, s.background)).toBeGreaterThanOrEqual(4.5);
      expect(contrast(s.text, '#ffffff')).toBeGreaterThanOrEqual(4.5);
      expect(contrast(s.mark, '#ffffff')).toBeGreaterThanOrEqual(3);
    });
  }

  it('gives each status its own symbol, so colour is never the only cue', () => {
    const symbols = [...Object.values(STATUS_STYLE).map((s) => s.symbol), NOT_APPLICABLE.symbol];
    expect(new Set(symbols).size).toBe(symbols.length);
    expect(contrast(NOT_APPLICABLE.text, '#ffffff')).toBeGreaterThanOrEqual(4.5);
  });
});
