import { afterEach, describe, expect, it } from 'vitest';
import { flushPromises, mount } from '@vue/test-utils';
import BatchForm from './BatchForm.vue';
import LineForm from './LineForm.vue';
import MatchForm from './MatchForm.vue';
import MismatchForm from './MismatchForm.vue';
import ReferForm from './ReferForm.vue';
import { figuresOf } from './figures.ts';
import { LineRequestSchema, MismatchRequestSchema, ReferRequestSchema } from '../../../../shared/schemas/calculations.ts';
import type { FormState } from './request.ts';

afterEach(() => {
  document.body.innerHTML = '';
});

function lastState(wrapper: { emitted: (name: string) => unknown[][] | undefined }): FormState {
  const events = wrapper.emitted('change') ?? [];
  return events[events.length - 1]![0] as FormState;
}

async function type(wrapper: ReturnType<typeof mount>, selector: string, value: string): Promise<void> {
  const input = wrapper.get(selector);
  await input.setValue(value);
  await input.trigger('blur');
  await flushPromises();
}

describe('the mismatch form of the Try page', () => {
  it('starts with a forward/reflected power reading ready to send, units on every label', async () => {
    const wrapper = mount(MismatchForm, { attachTo: document.body });
    await flushPromises();
    expect(lastState(wrapper)).toEqual({
      request: { endpoint: 'mismatch', method: 'POST', path: '/api/v1/mismatch', body: { forwardPowerW: 100, reflectedPowerW: 4 } },
      issues: [],
    });
    expect(wrapper.get('label[for="mm-forwardPowerW"]').text()).toContain('(W)');
    wrapper.unmount();
  });

  it('checks the body with the schema the server validates with: a negative power is refused', async () => {
    const wrapper = mount(MismatchForm, { attachTo: document.body });
    await type(wrapper, '#mm-reflectedPowerW', '-3');
    const state = lastState(wrapper);
    expect(state.request).toBeNull();
    expect(state.issues.join(' ')).toMatch(/reflectedPowerW/);
    wrapper.unmount();
  });

  it('asks for a value rather than sending an empty field', async () => {
    const wrapper = mount(MismatchForm, { attachTo: document.body });
    await type(wrapper, '#mm-forwardPowerW', '');
    expect(lastState(wrapper).request).toBeNull();
    expect(lastState(wrapper).issues).toContain('Forward power: enter a value');
    wrapper.unmount();
  });
});

describe('the L-network form of the Try page', () => {
  it('sends the frequency in hertz, the load as R + jX and the source impedance', async () => {
    const wrapper = mount(MatchForm, { attachTo: document.body });
    await type(wrapper, '#mt-f', '7.1');
    expect(lastState(wrapper).request).toEqual({
      endpoint: 'match',
      method: 'POST',
      path: '/api/v1/match',
      body: { frequencyHz: 7_100_000, loadOhm: { re: 12, im: -30 }, sourceOhm: 50 },
    });
    wrapper.unmount();
  });
});

describe('the line form of the Try page', () => {
  it('describes the line by its primary constants, typed in µH, µS and pF per metre and sent in SI units', async () => {
    const wrapper = mount(LineForm, { props: { cables: [] }, attachTo: document.body });
    await wrapper.get('input[type="radio"][value="rlgc"]').setValue(true);
    await flushPromises();
    expect(wrapper.get('label[for="ln-l"]').text()).toContain('µH/m');
    expect(lastState(wrapper).request).toEqual({
      endpoint: 'line',
      method: 'POST',
      path: '/api/v1/line',
      body: {
        frequencyHz: 14_200_000,
        line: { lengthM: 30, rlgc: { rOhmPerM: 0.28, lHPerM: 2.5e-7, gSPerM: 0, cFPerM: 1e-10 } },
        loadOhm: { re: 72, im: 18 },
        powerW: 100,
      },
    });
    await type(wrapper, '#ln-rating', '600');
    expect((lastState(wrapper).request as { body: { line: object } }).body.line).toMatchObject({ maxVoltageRmsV: 600 });
    await type(wrapper, '#ln-c', '0');
    expect(lastState(wrapper).request).toBeNull();
    expect(lastState(wrapper).issues.join(' ')).toMatch(/cFPerM/);
    wrapper.unmount();
  });
});

describe('the refer form of the Try page', () => {
  it('asks for no voltage rating: referring readings computes no voltage to check', async () => {
    const wrapper = mount(ReferForm, { props: { cables: [] }, attachTo: document.body });
    await wrapper.get('input[type="radio"][value="line"]').setValue(true);
    await flushPromises();
    expect(wrapper.find('#rf-line-rating').exists()).toBe(false);
    expect(wrapper.find('#rf-line-length').exists()).toBe(true);
    wrapper.unmount();
  });
});

describe('a saved feed line on the Try page', () => {
  const sections = [
    { cableId: 'rg-213', lengthM: 26, label: 'Buried run' },
    { insertionLossDb: 0.12, label: 'N barrel', maxVoltageRmsV: 500 },
    { cableId: 'rg-8x', lengthM: 9 },
  ];
  const feedlines = [{ id: '7d3f2e50-21d5-483e-9f91-2a6dcd2eefc1', name: 'Hut to mast', notes: '', sections, createdAt: '', updatedAt: '' }];

  it('sends the saved sections inline, as they are, to POST /api/v1/line', async () => {
    const wrapper = mount(LineForm, { props: { cables: [], feedlines: feedlines as never }, attachTo: document.body });
    await wrapper.get('input[type="radio"][value="saved"]').setValue(true);
    await flushPromises();
    expect(wrapper.find('#ln-length').exists()).toBe(false);
    expect(wrapper.find('#ln-feedline').exists()).toBe(true); // the label's target
    expect(lastState(wrapper).request).toMatchObject({ endpoint: 'line', body: { line: sections } });
    wrapper.unmount();
  });

  it('offers no saved feed line when there is none', async () => {
    const wrapper = mount(LineForm, { props: { cables: [] }, attachTo: document.body });
    await flushPromises();
    expect(wrapper.find('input[type="radio"][value="saved"]').exists()).toBe(false);
    wrapper.unmount();
  });

  it('reads the answer section by section', () => {
    const end = { reflection: { re: 0, im: 0, magnitude: 0.2, angleDeg: 0 }, swr: 1.5, returnLossDb: 14, impedanceOhm: { re: 75, im: 0 } };
    const one = { inputOhm: { re: 75, im: 0 }, characteristicOhm: { re: 50, im: 0 }, electricalLengthDeg: 10, lengthWavelengths: 0.03, matchedLossDb: 0.5, totalLossDb: 0.6, mismatchExtraLossDb: 0.1, atLoad: end, atInput: end, cautions: [] };
    const { groups } = figuresOf({ endpoint: 'line', body: { ...one, sections: [one, one] } as never });
    const bySection = groups.find((g) => g.heading.startsWith('Section by section'));
    expect(bySection?.figures.map((f) => f.value)).toEqual(['SWR 1.50 : 1 at its input, 0.50 dB matched loss', 'SWR 1.50 : 1 at its input, 0.50 dB matched loss']);
  });
});

describe('the batch form of the Try page', () => {
  it('starts with an example whose last item the server will refuse, and sends every item as written', async () => {
    const wrapper = mount(BatchForm, { attachTo: document.body });
    await flushPromises();
    const state = lastState(wrapper);
    expect(state.request).toMatchObject({ endpoint: 'batch', method: 'POST', path: '/api/v1/batch' });
    const items = (state.request as { body: { items: { op: string; input: object }[] } }).body.items;
    expect(items.map((i) => i.op)).toEqual(['mismatch', 'line', 'refer', 'mismatch']);
    // Checked with the schemas the server validates each item with: the first three pass, the last does not.
    const schemas = { mismatch: MismatchRequestSchema, line: LineRequestSchema, refer: ReferRequestSchema } as const;
    expect(items.map((i) => schemas[i.op as keyof typeof schemas].safeParse(i.input).success)).toEqual([true, true, true, false]);
    wrapper.unmount();
  });

  it('says so when the text is not JSON, and when there are no items', async () => {
    const wrapper = mount(BatchForm, { attachTo: document.body });
    await wrapper.get('#bt-body').setValue('{ "items": [');
    await flushPromises();
    expect(lastState(wrapper).request).toBeNull();
    expect(lastState(wrapper).issues[0]).toMatch(/^The text is not JSON/);
    await wrapper.get('#bt-body').setValue('{ "items": [] }');
    await flushPromises();
    expect(lastState(wrapper).issues).toEqual(['items: send at least one item']);
    wrapper.unmount();
  });

  it('reads a streamed batch answer item by item, numbered as the stream numbers them, refusals and cautions included', () => {
    const problem = { type: 'urn:gammaline:problem:unprocessable', title: 'The input cannot be computed', status: 422, detail: 'input.swr: Too small' };
    const line = { inputOhm: { re: 50, im: 0 }, cautions: ['Caution: the computed RMS voltage…'] };
    const results = [
      { line: 1, ok: true as const, output: { swr: 1.5 } },
      { line: 2, ok: false as const, problem },
      { line: 3, ok: true as const, output: line },
    ];
    const end = { end: 'complete' as const, summary: { items: 3, succeeded: 2, failed: 1, unitsCharged: 3 } };
    const { groups, cautions } = figuresOf({ endpoint: 'batch', body: { results, end } });
    expect(groups[0]!.heading).toBe('3 items: 2 computed, 1 refused');
    expect(groups[0]!.figures.map((f) => `${f.label}: ${f.value}`)).toEqual(['Item 1: SWR 1.50 : 1', 'Item 2: refused (422): input.swr: Too small', 'Item 3: input impedance 50.00 + j0 Ω']);
    expect(cautions).toEqual(['Item 3: Caution: the computed RMS voltage…']);
    expect(figuresOf({ endpoint: 'batch', body: { results, end: null } }).groups[0]!.heading).toContain('cut off');
  });
});
