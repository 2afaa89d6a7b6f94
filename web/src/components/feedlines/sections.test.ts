import { describe, expect, it } from 'vitest';
import { draftsOf, sectionsOf } from './sections.ts';

describe('feed line sections in the editor', () => {
  it('keeps every field of the sections it shows through an edit, voltage ratings included', () => {
    const stored = [
      { cableId: 'rg-213', lengthM: 28, label: 'Hut to mast foot', maxVoltageRmsV: 3000 },
      { insertionLossDb: 0.1, label: 'N barrel', maxVoltageRmsV: 500 },
      { cableId: 'rg-8x', lengthFt: 12 },
      { insertionLossDb: 0.05, label: 'Lightning arrestor' },
    ];
    const { drafts, kept } = draftsOf(stored, 1);
    expect(kept).toEqual([]);
    expect(sectionsOf(drafts)).toEqual({ sections: stored });
  });

  it('leaves sections it cannot show (Z0/VF/loss, RLGC) to be kept as they are', () => {
    const spec = { impedanceOhm: 50, velocityFactor: 0.66, lossDbPer100m: 2.5, lengthM: 10, maxVoltageRmsV: 800 };
    const { drafts, kept } = draftsOf([spec], 1);
    expect(drafts).toEqual([]);
    expect(kept).toEqual([spec]);
  });
});
