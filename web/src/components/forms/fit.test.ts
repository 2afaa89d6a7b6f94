import { afterEach, describe, expect, it } from 'vitest';
import { defineComponent, h } from 'vue';
import { flushPromises, mount } from '@vue/test-utils';
import ProblemView from '../ProblemView.vue';
import LineForm from '../try/LineForm.vue';
import MismatchForm from '../try/MismatchForm.vue';
import KeyCreateForm from '../keys/KeyCreateForm.vue';
import QuotaDialog from '../keys/QuotaDialog.vue';
import SweepUploadForm from '../sweeps/SweepUploadForm.vue';
import NumberField from './NumberField.vue';
import { provideFieldRegistry, type FieldRegistry } from './fieldRegistry.ts';
import { rangeRefusal } from './range.ts';
import type { FormState } from '../try/request.ts';

afterEach(() => {
  document.body.innerHTML = '';
});

async function type(wrapper: ReturnType<typeof mount>, selector: string, value: string): Promise<void> {
  const input = wrapper.get(selector);
  await input.setValue(value);
  await input.trigger('blur');
  await flushPromises();
}

describe('a number field with a range', () => {
  it('keeps −5 as typed and says at the field what it takes, instead of clamping it to the minimum', async () => {
    const wrapper = mount(NumberField, { props: { id: 'q', label: 'Units per day', modelValue: 10, min: 1, integer: true, 'onUpdate:modelValue': (v: number | null | undefined) => wrapper.setProps({ modelValue: v }) }, attachTo: document.body });
    await type(wrapper, '#q', '-5');
    expect(wrapper.props('modelValue')).toBe(-5);
    expect(wrapper.text()).toContain('Enter 1 or more.');
    expect(wrapper.get('#q').attributes('aria-invalid')).toBe('true');
    wrapper.unmount();
  });

  it('words each refusal for people', () => {
    expect(rangeRefusal(0, { above: 0 })).toBe('Enter more than 0.');
    expect(rangeRefusal(1.2, { max: 1 })).toBe('Enter 1 or less.');
    expect(rangeRefusal(2.5, { integer: true })).toBe('Enter a whole number.');
    expect(rangeRefusal(null, { min: 1 })).toBeNull();
    expect(rangeRefusal(0.66, { above: 0, max: 1 })).toBeNull();
  });

  it('shows no library placeholder in an empty field', async () => {
    const wrapper = mount(NumberField, { props: { id: 'e', label: 'Empty', modelValue: null }, attachTo: document.body });
    expect(wrapper.get('#e').attributes('placeholder') ?? '').not.toMatch(/please/i);
    wrapper.unmount();
  });
});

describe('the key limits dialog', () => {
  const key = { id: 'k1', name: 'Harbour marine tablet', dailyQuota: 5000, burstPerMinute: 120 };

  it('refuses a negative quota aloud and saves nothing', async () => {
    const wrapper = mount(QuotaDialog, { props: { apiKey: key as never }, attachTo: document.body });
    await flushPromises();
    const input = document.querySelector<HTMLInputElement>('#quota-value')!;
    input.value = '-5';
    input.dispatchEvent(new Event('input'));
    input.dispatchEvent(new Event('blur'));
    await flushPromises();
    document.querySelector<HTMLButtonElement>('[data-testid="save-limits"]')!.click();
    await flushPromises();
    expect(wrapper.emitted('save')).toBeUndefined();
    expect(document.body.textContent).toContain('Enter 1 or more.');
    expect(document.body.textContent).not.toMatch(/please input/i);
    wrapper.unmount();
  });

  it('saves both limits when they are in range', async () => {
    const wrapper = mount(QuotaDialog, { props: { apiKey: key as never }, attachTo: document.body });
    await flushPromises();
    document.querySelector<HTMLButtonElement>('[data-testid="save-limits"]')!.click();
    await flushPromises();
    expect(wrapper.emitted('save')).toEqual([[{ dailyQuota: 5000, burstPerMinute: 120 }]]);
    wrapper.unmount();
  });
});

describe('one display for problems from the API', () => {
  const problem = {
    type: 'urn:gammaline:problem:unprocessable',
    title: 'The input cannot be computed',
    status: 422,
    detail: 'reflectedPowerW: Reflected power cannot exceed forward power at a passive load; check that the meter readings are not swapped.',
    errors: [{ field: 'reflectedPowerW', message: 'Reflected power cannot exceed forward power at a passive load; check that the meter readings are not swapped.' }],
  };

  it("says the reason once, under the form's label, with the raw problem behind a disclosure", () => {
    const wrapper = mount(ProblemView, { props: { problem, labelFor: (f: string) => (f === 'reflectedPowerW' ? 'Reflected power (W)' : undefined) } });
    const summary = wrapper.get('[data-testid="problem-summary"]').text();
    expect(summary).toBe('Reflected power (W): Reflected power cannot exceed forward power at a passive load; check that the meter readings are not swapped.');
    const outsideRaw = wrapper.text().replace(wrapper.get('details').text(), '');
    expect(outsideRaw.split('cannot exceed forward power').length - 1).toBe(1);
    expect(outsideRaw).not.toContain('reflectedPowerW');
    expect(wrapper.get('details summary').text()).toContain('As the API sent it (422)');
    expect(wrapper.find('.problem-view__more').exists()).toBe(false);
    wrapper.unmount();
  });

  it('lists the field errors the detail does not already say, by label or by path', () => {
    const several = { ...problem, status: 400, detail: 'The request does not fit the schema.', errors: [{ field: 'swr', message: 'required (number)' }, { field: 'line.lengthMeters', message: 'unknown field' }] };
    const wrapper = mount(ProblemView, { props: { problem: several, labelFor: (f: string) => (f === 'swr' ? 'SWR (: 1)' : undefined) } });
    expect(wrapper.findAll('.problem-view__more li').map((li) => li.text())).toEqual(['SWR (: 1): required (number)', 'line.lengthMeters: unknown field']);
    wrapper.unmount();
  });

  it("marks the form field the API's error names", async () => {
    let registry: FieldRegistry | undefined;
    const Harness = defineComponent(() => {
      registry = provideFieldRegistry();
      return () => h(MismatchForm, { onChange: () => {} });
    });
    const wrapper = mount(Harness, { attachTo: document.body });
    await flushPromises();
    registry!.messages.value = { reflectedPowerW: 'Reflected power cannot exceed forward power.' };
    await flushPromises();
    expect(wrapper.get('#mm-reflectedPowerW').attributes('aria-invalid')).toBe('true');
    expect(wrapper.text()).toContain('Reflected power cannot exceed forward power.');
    expect(registry!.labelFor('reflectedPowerW')).toBe('Reflected power (W)');
    wrapper.unmount();
  });
});

describe('the metres/feet switch of the line form', () => {
  function lastState(wrapper: { emitted: (name: string) => unknown[][] | undefined }): FormState {
    const events = wrapper.emitted('change') ?? [];
    return events[events.length - 1]![0] as FormState;
  }

  it('converts the typed length and loss, says so, and sends the same line in feet', async () => {
    const wrapper = mount(LineForm, { props: { cables: [] }, attachTo: document.body });
    await wrapper.get('input[type="radio"][value="spec"]').setValue(true);
    await type(wrapper, '#ln-length', '12');
    await type(wrapper, '#ln-loss', '2');
    await wrapper.get('input[type="radio"][value="imperial"]').setValue(true);
    await flushPromises();
    expect(wrapper.get('[data-testid="units-converted"]').text()).toBe('Converted: 12 m is 39.3701 ft; 2 dB/100 m is 0.6096 dB/100 ft.');
    expect(wrapper.get('label[for="ln-length"]').text()).toContain('(ft)');
    const line = (lastState(wrapper).request as { body: { line: Record<string, number> } }).body.line;
    expect(line).toMatchObject({ lengthFt: 39.3701, lossDbPer100ft: 0.6096 });
    expect(line).not.toHaveProperty('lengthM');
    wrapper.unmount();
  });
});

describe('controls the API has', () => {
  it('sends an acceptance figure over a frequency range with a sweep, and refuses a reversed range', async () => {
    const wrapper = mount(SweepUploadForm, { props: { feedlines: [], progress: null }, attachTo: document.body });
    const file = new File(['! invented\n# MHz S RI R 50\n7.0 0.1 0\n7.1 0.05 0\n7.2 0.2 0\n'], 'ridge.s1p');
    const input = wrapper.get('#sw-file').element as HTMLInputElement;
    Object.defineProperty(input, 'files', { value: [file] });
    await wrapper.get('#sw-file').trigger('change');
    await type(wrapper, '#sw-mask', '1.5');
    await type(wrapper, '#sw-mask-start', '7.05');
    await type(wrapper, '#sw-mask-stop', '7.0');
    await wrapper.get('form').trigger('submit');
    await flushPromises();
    expect(wrapper.emitted('submit')).toBeUndefined();
    expect(wrapper.text()).toContain('Give an end at or above the start.');
    await type(wrapper, '#sw-mask-stop', '7.15');
    await wrapper.get('form').trigger('submit');
    const sent = wrapper.emitted('submit')![0]![0] as FormData;
    expect(JSON.parse(String(sent.get('mask')))).toEqual({ maxSwr: 1.5, startHz: 7_050_000, stopHz: 7_150_000 });
    wrapper.unmount();
  });

  it("lets an admin give a new key its per-minute limit and an expiry day", async () => {
    const wrapper = mount(KeyCreateForm, { props: { isAdmin: true, defaultDailyQuota: 10000, defaultBurstPerMinute: 120, members: [] }, attachTo: document.body });
    expect(wrapper.get('#key-burst').attributes('placeholder')).toContain('120');
    await wrapper.get('#key-name').setValue('Tower crew tablet');
    await type(wrapper, '#key-burst', '30');
    await wrapper.get('#key-expiry').setValue('2099-06-30');
    await wrapper.get('form').trigger('submit');
    expect(wrapper.emitted('submit')).toEqual([[{ name: 'Tower crew tablet', burstPerMinute: 30, expiresAt: '2099-06-30T23:59:59Z' }]]);
    wrapper.unmount();
  });
});
