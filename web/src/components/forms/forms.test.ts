import { afterEach, describe, expect, it } from 'vitest';
import { flushPromises, mount } from '@vue/test-utils';
import KeyCreateForm from '../keys/KeyCreateForm.vue';
import NewPasswordForm from './NewPasswordForm.vue';
import SignInForm from './SignInForm.vue';

afterEach(() => {
  document.body.innerHTML = '';
});

describe('the sign-in form', () => {
  it('ties every input to a visible label', () => {
    const wrapper = mount(SignInForm, { attachTo: document.body });
    for (const id of ['sign-in-email', 'sign-in-password']) {
      expect(wrapper.find(`label[for="${id}"]`).exists(), id).toBe(true);
      expect(wrapper.find(`input#${id}`).exists(), id).toBe(true);
    }
    wrapper.unmount();
  });

  it('sends the trimmed e-mail and the password as typed', async () => {
    const wrapper = mount(SignInForm, { attachTo: document.body });
    await wrapper.get('#sign-in-email').setValue('  admin@kestrel-ridge.example ');
    await wrapper.get('#sign-in-password').setValue(' gammaline-demo-2026');
    await wrapper.get('form').trigger('submit');
    expect(wrapper.emitted('submit')).toEqual([[{ email: 'admin@kestrel-ridge.example', password: ' gammaline-demo-2026' }]]);
    wrapper.unmount();
  });

  it('says what is missing instead of sending an empty form', async () => {
    const wrapper = mount(SignInForm, { attachTo: document.body });
    await wrapper.get('form').trigger('submit');
    await flushPromises();
    expect(wrapper.emitted('submit')).toBeUndefined();
    expect(wrapper.text()).toContain('Enter the e-mail address');
    expect(wrapper.text()).toContain('Enter your password');
    wrapper.unmount();
  });
});

describe('the new-password form (invitation and reset)', () => {
  it('asks for 12 characters and the same password twice before sending', async () => {
    const wrapper = mount(NewPasswordForm, { props: { askName: true, submitLabel: 'Join' }, attachTo: document.body });
    await wrapper.get('#np-name').setValue('Oskar Brandt');
    await wrapper.get('#np-password').setValue('too short');
    await wrapper.get('#np-repeat').setValue('too short');
    await wrapper.get('form').trigger('submit');
    await flushPromises();
    expect(wrapper.emitted('submit')).toBeUndefined();
    expect(wrapper.text()).toContain('at least 12 characters');

    await wrapper.get('#np-password').setValue('four quiet ridge antennas');
    await wrapper.get('#np-repeat').setValue('four quiet ridge antenna');
    await wrapper.get('form').trigger('submit');
    await flushPromises();
    expect(wrapper.emitted('submit')).toBeUndefined();
    expect(wrapper.text()).toContain('The two passwords differ');

    await wrapper.get('#np-repeat').setValue('four quiet ridge antennas');
    await wrapper.get('form').trigger('submit');
    expect(wrapper.emitted('submit')).toEqual([[{ displayName: 'Oskar Brandt', password: 'four quiet ridge antennas' }]]);
    wrapper.unmount();
  });

  it('leaves the name out when resetting a password', () => {
    const wrapper = mount(NewPasswordForm, { props: { submitLabel: 'Save' }, attachTo: document.body });
    expect(wrapper.find('#np-name').exists()).toBe(false);
    wrapper.unmount();
  });
});

describe('the form that issues a key', () => {
  it('sends only a name and a note for a developer (quotas are for admins)', async () => {
    const wrapper = mount(KeyCreateForm, { props: { isAdmin: false }, attachTo: document.body });
    expect(wrapper.find('#key-quota').exists()).toBe(false);
    expect(wrapper.find('#key-owner').exists()).toBe(false);
    await wrapper.get('#key-name').setValue('  Shack logger ');
    await wrapper.get('#key-note').setValue('Club laptop');
    await wrapper.get('form').trigger('submit');
    expect(wrapper.emitted('submit')).toEqual([[{ name: 'Shack logger', note: 'Club laptop' }]]);
    wrapper.unmount();
  });

  it('refuses a key without a name and says why', async () => {
    const wrapper = mount(KeyCreateForm, { props: { isAdmin: false }, attachTo: document.body });
    await wrapper.get('form').trigger('submit');
    await flushPromises();
    expect(wrapper.emitted('submit')).toBeUndefined();
    expect(wrapper.text()).toContain('Name the key');
    wrapper.unmount();
  });

  it('lets an admin set the daily quota, and offers the organisation default', async () => {
    const wrapper = mount(KeyCreateForm, { props: { isAdmin: true, defaultDailyQuota: 10000, members: [] }, attachTo: document.body });
    expect(wrapper.get('#key-quota').attributes('placeholder')).toContain('10000');
    await wrapper.get('#key-name').setValue('Tower crew tablet');
    await wrapper.get('#key-quota').setValue('2500');
    await wrapper.get('#key-quota').trigger('blur');
    await wrapper.get('form').trigger('submit');
    expect(wrapper.emitted('submit')).toEqual([[{ name: 'Tower crew tablet', dailyQuota: 2500 }]]);
    wrapper.unmount();
  });
});
