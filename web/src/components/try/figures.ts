import { api, unwrap, type Schemas } from '../../api/client.ts';
import { formatCount, formatDb, formatLengthM, formatFrequency, formatImpedance, formatNumber, formatSwr } from '../../utils/format.ts';
import { streamBatch, type BatchAnswer } from './batchStream.ts';
import type { TryRequest } from './request.ts';

/** The API's answer to a Try request, tagged with the endpoint that gave it. */
export type TryAnswer =
  | { endpoint: 'mismatch'; body: Schemas['MismatchResult'] }
  | { endpoint: 'reflection'; body: Schemas['ReflectionResult'] }
  | { endpoint: 'line'; body: Schemas['LineResult']; /** The sections' own labels, from the request, to name each in the answer. */ sectionLabels?: (string | undefined)[] }
  | { endpoint: 'refer'; body: Schemas['ReferResult'] }
  | { endpoint: 'match'; body: Schemas['MatchResult'] }
  | { endpoint: 'batch'; body: BatchAnswer }
  | { endpoint: 'attenuation'; body: Schemas['CableAttenuation'] };

/**
 * Sends a Try request with the console session. Bodies were checked against the same zod schemas
 * the server validates with, so the casts only restate what the form built.
 */
export async function sendTry(request: TryRequest, onProgress: (answered: number) => void = () => {}): Promise<TryAnswer> {
  switch (request.endpoint) {
    case 'mismatch':
      return { endpoint: 'mismatch', body: await unwrap(api.POST('/api/v1/mismatch', { body: request.body as Schemas['MismatchRequest'] })) };
    case 'reflection':
      return { endpoint: 'reflection', body: await unwrap(api.POST('/api/v1/reflection', { body: request.body as Schemas['ReflectionRequest'] })) };
    case 'line':
    {
      const body = request.body as Schemas['LineRequest'];
      const sectionLabels = Array.isArray(body.line) ? body.line.map((section) => (section as { label?: string }).label) : undefined;
      return { endpoint: 'line', body: await unwrap(api.POST('/api/v1/line', { body })), sectionLabels };
    }
    case 'refer':
      return { endpoint: 'refer', body: await unwrap(api.POST('/api/v1/refer', { body: request.body as Schemas['ReferRequest'] })) };
    case 'match':
      return { endpoint: 'match', body: await unwrap(api.POST('/api/v1/match', { body: request.body as Schemas['MatchRequest'] })) };
    case 'batch':
      // As NDJSON, so the count of answered items grows while the rest are computed.
      return { endpoint: 'batch', body: await streamBatch((request.body as { items: unknown[] }).items, onProgress) };
    case 'attenuation':
      return {
        endpoint: 'attenuation',
        body: await unwrap(
          api.GET('/api/v1/cables/{id}/attenuation', {
            params: {
              path: { id: request.cableId },
              query: request.query as { frequencyHz: number; lengthM?: number; lengthFt?: number },
            },
          }),
        ),
      };
  }
}

/** One readable value; `name` is the field of the answer it comes from (tests compare by it). */
export interface Figure {
  name: string;
  label: string;
  value: string;
}

export interface FigureGroup {
  heading: string;
  figures: Figure[];
}

const swrText = (v: number | null | undefined) => formatSwr(v);
const dbText = (v: number | null | undefined, unbounded: string) => (v === null ? unbounded : formatDb(v));
const wText = (v: number | undefined) => (v === undefined ? '—' : `${formatNumber(v)} W`);

function mismatchFigures(r: {
  swr: number | null;
  returnLossDb: number | null;
  mismatchLossDb: number | null;
  reflectedPowerRatio: number;
  transmittedPowerRatio: number;
}): Figure[] {
  return [
    { name: 'swr', label: 'SWR', value: swrText(r.swr) },
    { name: 'returnLossDb', label: 'Return loss', value: dbText(r.returnLossDb, 'unbounded (perfect match)') },
    { name: 'mismatchLossDb', label: 'Mismatch loss', value: dbText(r.mismatchLossDb, 'unbounded (nothing delivered)') },
    { name: 'reflectedPowerRatio', label: 'Power reflected', value: `${formatNumber(100 * r.reflectedPowerRatio)} %` },
    { name: 'transmittedPowerRatio', label: 'Power delivered', value: `${formatNumber(100 * r.transmittedPowerRatio)} %` },
  ];
}

function endFigures(prefix: string, e: Schemas['ReferResult']['atInput']): Figure[] {
  const list: Figure[] = [
    { name: `${prefix}.swr`, label: 'SWR', value: swrText(e.swr) },
    { name: `${prefix}.returnLossDb`, label: 'Return loss', value: dbText(e.returnLossDb, 'unbounded (perfect match)') },
    { name: `${prefix}.reflectionMagnitude`, label: '|Γ|', value: formatNumber(e.reflectionMagnitude) },
  ];
  if (e.forwardPowerW !== undefined) list.push({ name: `${prefix}.forwardPowerW`, label: 'Forward power', value: wText(e.forwardPowerW) });
  if (e.reflectedPowerW !== undefined) list.push({ name: `${prefix}.reflectedPowerW`, label: 'Reflected power', value: wText(e.reflectedPowerW) });
  if (e.netPowerW !== undefined) list.push({ name: `${prefix}.netPowerW`, label: 'Net power', value: wText(e.netPowerW) });
  return list;
}

/** One computed batch output in a few words: its key figure, whichever calculation gave it. */
function batchOutputText(output: Record<string, unknown>): string {
  const o = output as { swr?: number | null; inputOhm?: { re: number; im: number }; atLoad?: { swr: number | null }; solutions?: unknown[]; reflection?: { magnitude: number } };
  if (o.inputOhm) return `input impedance ${formatImpedance(o.inputOhm)}`;
  if (o.atLoad) return `SWR at the antenna ${swrText(o.atLoad.swr)}`;
  if (o.solutions) return `${o.solutions.length} L-network(s)`;
  if (o.reflection) return `|Γ| ${formatNumber(o.reflection.magnitude)}, SWR ${swrText(o.swr)}`;
  if (o.swr !== undefined) return `SWR ${swrText(o.swr)}`;
  return 'computed';
}

/** Readable groups of values and the cautions of an answer. */
export function figuresOf(answer: TryAnswer): { groups: FigureGroup[]; cautions: string[] } {
  switch (answer.endpoint) {
    case 'batch': {
      // Items are counted from 1, as the stream's `line` counts them; a refusal's field path is
      // within its own item (`input.swr`), so the row's number and the path never disagree.
      const { results, end } = answer.body;
      const computed = results.filter((r) => r.ok).length;
      const cautions: string[] = [];
      const figures = results.map((r) => {
        if (!r.ok) return { name: `line.${r.line}`, label: `Item ${r.line}`, value: `refused (${r.problem.status}): ${r.problem.detail || r.problem.title}` };
        for (const c of (r.output as { cautions?: string[] }).cautions ?? []) cautions.push(`Item ${r.line}: ${c}`);
        return { name: `line.${r.line}`, label: `Item ${r.line}`, value: batchOutputText(r.output) };
      });
      const items = results.length === 1 ? '1 item' : `${formatCount(results.length)} items`;
      const tail = end === null ? '; the answer was cut off before its end' : end.end === 'stopped' ? `; stopped early: ${end.problem?.detail ?? 'see the JSON'}` : '';
      return { groups: [{ heading: `${items}: ${formatCount(computed)} computed, ${formatCount(results.length - computed)} refused${tail}`, figures }], cautions };
    }
    case 'mismatch': {
      const r = answer.body;
      const figures = [{ name: 'reflectionMagnitude', label: '|Γ|', value: formatNumber(r.reflectionMagnitude) }, ...mismatchFigures(r)];
      if (r.netPowerW !== undefined) figures.push({ name: 'netPowerW', label: 'Net power', value: wText(r.netPowerW) });
      return { groups: [{ heading: 'Mismatch', figures }], cautions: [] };
    }
    case 'reflection': {
      const r = answer.body;
      return {
        groups: [
          {
            heading: 'Reflection',
            figures: [
              { name: 'reflection.magnitude', label: '|Γ|', value: formatNumber(r.reflection.magnitude) },
              { name: 'reflection.angleDeg', label: 'Angle of Γ', value: `${formatNumber(r.reflection.angleDeg)}°` },
              { name: 'loadOhm', label: 'Load', value: r.loadOhm ? formatImpedance(r.loadOhm) : 'open circuit' },
              ...mismatchFigures(r),
            ],
          },
        ],
        cautions: [],
      };
    }
    case 'line': {
      const r = answer.body;
      const groups: FigureGroup[] = [
        {
          heading: 'Line',
          figures: [
            { name: 'inputOhm', label: 'Input impedance', value: formatImpedance(r.inputOhm) },
            { name: 'matchedLossDb', label: 'Matched loss', value: formatDb(r.matchedLossDb) },
            { name: 'totalLossDb', label: 'Total loss with this load', value: dbText(r.totalLossDb, 'no power reaches the load') },
            { name: 'electricalLengthDeg', label: 'Electrical length', value: `${formatNumber(r.electricalLengthDeg)}°` },
          ],
        },
        {
          heading: 'At the input (transmitter end)',
          figures: [
            { name: 'atInput.swr', label: 'SWR', value: swrText(r.atInput.swr) },
            { name: 'atInput.returnLossDb', label: 'Return loss', value: dbText(r.atInput.returnLossDb, 'unbounded (perfect match)') },
          ],
        },
        {
          heading: 'At the load (antenna end)',
          figures: [
            { name: 'atLoad.swr', label: 'SWR', value: swrText(r.atLoad.swr) },
            { name: 'atLoad.returnLossDb', label: 'Return loss', value: dbText(r.atLoad.returnLossDb, 'unbounded (perfect match)') },
          ],
        },
      ];
      if (r.power) {
        groups.push({
          heading: 'Power',
          figures: [
            { name: 'power.loadW', label: 'Delivered to the load', value: wText(r.power.loadW) },
            { name: 'power.lineDissipationW', label: 'Burned in the line', value: wText(r.power.lineDissipationW) },
          ],
        });
      }
      if (r.peaks) {
        groups.push({
          heading: 'Peaks on the line (RMS)',
          figures: [
            { name: 'peaks.maxVoltageV', label: 'Highest voltage', value: `${formatNumber(r.peaks.maxVoltageV)} V at ${formatNumber(r.peaks.maxVoltageAtM)} m` },
            { name: 'peaks.maxCurrentA', label: 'Highest current', value: `${formatNumber(r.peaks.maxCurrentA)} A at ${formatNumber(r.peaks.maxCurrentAtM)} m` },
          ],
        });
      }
      if (r.sections) {
        groups.push({
          heading: 'Section by section, from the transmitter',
          figures: r.sections.map((section, i) => ({
            name: `sections.${i}`,
            label: answer.sectionLabels?.[i] || `Section ${i + 1}`,
            value: `SWR ${swrText(section.atInput.swr)} at its input, ${formatDb(section.matchedLossDb)} matched loss`,
          })),
        });
      }
      return { groups, cautions: r.cautions };
    }
    case 'refer': {
      const r = answer.body;
      const line: Figure[] = [
        { name: 'matchedLossDb', label: 'Matched loss', value: formatDb(r.matchedLossDb) },
        { name: 'totalLossDb', label: 'Total loss', value: dbText(r.totalLossDb, 'no power reaches the load') },
      ];
      if (r.lineDissipationW !== undefined) line.push({ name: 'lineDissipationW', label: 'Burned in the line', value: wText(r.lineDissipationW) });
      return {
        groups: [
          { heading: 'At the input (transmitter end)', figures: endFigures('atInput', r.atInput) },
          { heading: 'At the load (antenna end)', figures: endFigures('atLoad', r.atLoad) },
          { heading: 'Line', figures: line },
        ],
        cautions: [],
      };
    }
    case 'match': {
      const groups = answer.body.solutions.map((s, i) => ({
        heading: `Solution ${i + 1}: ${s.topology === 'shuntAtLoad' ? 'shunt element across the load' : 'series element at the load'}`,
        // Elements come from the source to the load: say which one the transmitter sees first.
        figures: s.elements.map((e, j) => ({
          name: `solutions.${i}.elements.${j}`,
          label: `${j === 0 ? 'Transmitter side' : j === s.elements.length - 1 ? 'Load side' : 'Then'}: ${e.position} ${e.kind}`,
          value:
            e.valueH !== undefined
              ? `${formatNumber(e.valueH * 1e6)} µH (X = ${formatNumber(e.reactanceOhm)} Ω)`
              : e.valueF !== undefined
                ? `${formatNumber(e.valueF * 1e12)} pF (X = ${formatNumber(e.reactanceOhm)} Ω)`
                : `X = ${formatNumber(e.reactanceOhm)} Ω`,
        })),
      }));
      return { groups: groups.length > 0 ? groups : [{ heading: 'No L-network needed', figures: [] }], cautions: [] };
    }
    case 'attenuation': {
      const r = answer.body;
      const figures: Figure[] = [
        { name: 'frequencyHz', label: 'Frequency', value: formatFrequency(r.frequencyHz) },
        { name: 'lossDbPer100m', label: 'Matched loss per 100 m', value: formatDb(r.lossDbPer100m) },
        { name: 'lossDbPer100ft', label: 'Matched loss per 100 ft', value: formatDb(r.lossDbPer100ft) },
      ];
      if (r.lossDb !== undefined) figures.push({ name: 'lossDb', label: `Loss of ${formatLengthM(r.lengthM)}`, value: formatDb(r.lossDb) });
      return { groups: [{ heading: 'Cable loss', figures }], cautions: [] };
    }
  }
}
