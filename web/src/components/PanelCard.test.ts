import { describe, expect, it } from 'vitest';
import { mount } from '@vue/test-utils';
import { h } from 'vue';
import PanelCard from './PanelCard.vue';

describe('the card with a real heading', () => {
  it('renders its title as a heading of the level asked for, and no level-less ARIA heading', () => {
    const wrapper = mount(PanelCard, { props: { title: 'Issued keys', level: 3 }, slots: { default: () => h('p', 'rows') } });
    expect(wrapper.find('h3').text()).toBe('Issued keys');
    expect(wrapper.find('[role="heading"]').exists()).toBe(false);
  });

  it('takes its name from its heading when it is shown as a dialog', () => {
    const wrapper = mount(PanelCard, { props: { title: 'Limits' }, attrs: { role: 'dialog', 'aria-modal': 'true' } });
    const dialog = wrapper.find('[role="dialog"]');
    const heading = wrapper.find('h2');
    expect(dialog.attributes('aria-labelledby')).toBe(heading.attributes('id'));
  });

  it('has no header at all without a title', () => {
    const wrapper = mount(PanelCard, { slots: { default: () => h('p', 'only content') } });
    expect(wrapper.find('h2').exists()).toBe(false);
    expect(wrapper.text()).toBe('only content');
  });
});
