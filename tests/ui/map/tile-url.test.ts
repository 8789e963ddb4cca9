import { describe, expect, it } from 'vitest';
import { tileUrlUsable } from '../../../src/ui/map/tile-url.ts';

describe('tileUrlUsable', () => {
  it('tileUrlUsable takes an https address with {z}, {x} and {y}', () => {
    expect(tileUrlUsable('https://tiles.example.org/{z}/{x}/{y}.png')).toBe(true);
    expect(tileUrlUsable('  https://t.example.org/a/{z}/{x}/{y}@2x.png  ')).toBe(true);
  });

  it('tileUrlUsable refuses plain http (the app\'s CSP would block the images), and addresses without the placeholders', () => {
    expect(tileUrlUsable('http://tiles.example.org/{z}/{x}/{y}.png')).toBe(false);
    expect(tileUrlUsable('https://tiles.example.org/{x}/{y}.png')).toBe(false);
    expect(tileUrlUsable('javascript:alert(1)//{z}{x}{y}')).toBe(false);
    expect(tileUrlUsable('')).toBe(false);
  });
});
