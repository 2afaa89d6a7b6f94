import type { Schemas } from '../../api/client.ts';
import type { SectionDraft } from './SectionsEditor.vue';

type Section = Schemas['FeedlineSection'];

/** Editable rows from stored sections; sections the editor cannot show (Z0/VF/loss, RLGC) stay as they are. */
export function draftsOf(sections: readonly Section[], seed = Date.now()): { drafts: SectionDraft[]; kept: Section[] } {
  const drafts: SectionDraft[] = [];
  const kept: Section[] = [];
  sections.forEach((s, i) => {
    if (s.insertionLossDb !== undefined) {
      drafts.push({ key: seed + i, kind: 'connector', cableId: null, length: null, units: 'm', insertionLossDb: s.insertionLossDb, label: s.label ?? '', ratingV: s.maxVoltageRmsV ?? null, impedanceOhm: s.impedanceOhm });
    } else if (s.cableId !== undefined) {
      const feet = s.lengthFt !== undefined;
      drafts.push({ key: seed + i, kind: 'cable', cableId: s.cableId, length: feet ? (s.lengthFt ?? null) : (s.lengthM ?? null), units: feet ? 'ft' : 'm', insertionLossDb: null, label: s.label ?? '', ratingV: s.maxVoltageRmsV ?? null });
    } else {
      kept.push(s);
    }
  });
  return { drafts, kept };
}

/** Sections to send, or the first thing to fix. */
export function sectionsOf(drafts: readonly SectionDraft[]): { sections: Section[] } | { problem: string } {
  const sections: Section[] = [];
  for (const [i, d] of drafts.entries()) {
    const label = d.label.trim();
    if (d.ratingV !== null && !(d.ratingV > 0)) return { problem: `Section ${i + 1}: a voltage rating is above 0 V (leave it empty for none).` };
    if (d.kind === 'connector') {
      if (d.insertionLossDb === null) return { problem: `Section ${i + 1}: enter the connector's insertion loss.` };
      if (!label) return { problem: `Section ${i + 1}: say what the connector is.` };
      const connector: Section = { insertionLossDb: d.insertionLossDb, label };
      if (d.impedanceOhm !== undefined) connector.impedanceOhm = d.impedanceOhm;
      if (d.ratingV !== null) connector.maxVoltageRmsV = d.ratingV;
      sections.push(connector);
      continue;
    }
    if (!d.cableId) return { problem: `Section ${i + 1}: pick a cable.` };
    if (d.length === null) return { problem: `Section ${i + 1}: enter the length.` };
    const section: Section = d.units === 'ft' ? { cableId: d.cableId, lengthFt: d.length } : { cableId: d.cableId, lengthM: d.length };
    if (label) section.label = label;
    if (d.ratingV !== null) section.maxVoltageRmsV = d.ratingV;
    sections.push(section);
  }
  if (!sections.some((s) => s.insertionLossDb === undefined)) return { problem: 'A feed line needs at least one cable section.' };
  return { sections };
}
