import { afterEach, describe, expect, it, vi } from 'vitest';
import { defineComponent, h } from 'vue';
import { flushPromises, mount } from '@vue/test-utils';
import { createPinia } from 'pinia';
import { createMemoryHistory } from 'vue-router';
import { NMessageProvider } from 'naive-ui';
import { createConsoleRouter } from '../router/index.ts';
import { fakeApi, json } from '../test/fakeApi.ts';
import TryView from './TryView.vue';

afterEach(() => {
  vi.unstubAllGlobals();
  document.body.innerHTML = '';
});

// useMessage() needs its provider above the view, as App.vue gives it in the real console.
const Harness = defineComponent(() => () => h(NMessageProvider, null, { default: () => h(TryView) }));

describe('the Try page with a batch answer full of cautions', () => {
  it('shows the first three cautions in full and counts the rest', async () => {
    const caution = (i: number) => `Caution: the computed RMS voltage on the line reaches ${900 + i} V, above its rating of 600 V RMS.`;
    const line = (i: number) => ({ inputOhm: { re: 50, im: 0 }, cautions: [caution(i)] });
    fakeApi({
      'GET /api/v1/cables': () => json({ cables: [] }),
      'GET /api/v1/keys': () => json({ keys: [] }),
      'GET /api/v1/feedlines': () => json({ feedlines: [] }),
      'POST /api/v1/batch': () =>
        new Response(
          [1, 2, 3, 4, 5].map((i) => JSON.stringify({ line: i, ok: true, output: line(i) })).join('\n') +
            `\n${JSON.stringify({ end: 'complete', summary: { items: 5, succeeded: 5, failed: 0, unitsCharged: 5 } })}\n`,
          { headers: { 'content-type': 'application/x-ndjson' } },
        ),
    });
    const router = createConsoleRouter(createMemoryHistory());
    const wrapper = mount(Harness, { global: { plugins: [createPinia(), router] }, attachTo: document.body });
    await flushPromises();
    await wrapper.get('[data-choice="batch"] input').setValue(true);
    await flushPromises();
    await wrapper.get('form.try-view__form').trigger('submit');
    await flushPromises();
    const shown = wrapper.findAll('[data-testid="caution"]').map((a) => a.text());
    expect(shown).toHaveLength(3);
    expect(shown[0]).toContain('Item 1: Caution');
    expect(wrapper.get('[data-testid="more-cautions"]').text()).toContain('2 more in this answer');
    wrapper.unmount();
  });
});
