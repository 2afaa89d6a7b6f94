import { describe, expect, it } from 'vitest';
import { draftsOf, sectionsOf } from './sections.ts';

describe('feed line sections in the editor', () => {
  it('keeps every field of the sections it shows through an edit, voltage ratings included', () => {
    const stored = [
      { cableId: 'rg-213', lengthM: 28, label: 'Hut to mast foot', maxVoltageRmsV: 3000 },
      { insertionLossDb: 0.1, label: 'N barrel', maxVoltageRmsV: 500 },
      { cableId: 'rg-8x', lengthFt: 12 },
      { insertionLossDb: 0.05, label: 'Lightning arrestor' },
      { insertionLossDb: 0.2, label: '75 to 50 ohm adapter', impedanceOhm: 75, maxVoltageRmsV: 500 },
    ];
    const { drafts, kept } = draftsOf(stored, 1);
    expect(kept).toEqual([]);
    expect(sectionsOf(drafts)).toEqual({ sections: stored });
  });

  it('asks for a rating above 0 V rather than sending one the API refuses', () => {
    const { drafts } = draftsOf([{ cableId: 'rg-213', lengthM: 10 }], 1);
    expect(sectionsOf([{ ...drafts[0]!, ratingV: 0 }])).toEqual({ problem: 'Section 1: a voltage rating is above 0 V (leave it empty for none).' });
  });

  it('leaves sections it cannot show (Z0/VF/loss, RLGC) to be kept as they are', () => {
    const spec = { impedanceOhm: 50, velocityFactor: 0.66, lossDbPer100m: 2.5, lengthM: 10, maxVoltageRmsV: 800 };
    const { drafts, kept } = draftsOf([spec], 1);
    expect(drafts).toEqual([]);
    expect(kept).toEqual([spec]);
  });
});
