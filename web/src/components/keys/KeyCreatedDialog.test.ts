import { afterEach, describe, expect, it, vi } from 'vitest';
import { flushPromises, mount } from '@vue/test-utils';
import { NDialogProvider, NMessageProvider } from 'naive-ui';
import { defineComponent, h, ref } from 'vue';
import KeyCreatedDialog from './KeyCreatedDialog.vue';

const SECRET = 'gml_Xq3v9AbCdEfGhIjKlMnOpQrStUvWxYz0123456789-_';

function mountDialog(secret: string | null) {
  const shown = ref<string | null>(secret);
  const closed = vi.fn();
  const Host = defineComponent(() => () =>
    h(NMessageProvider, null, () =>
      h(NDialogProvider, null, () =>
        h(KeyCreatedDialog, {
          secret: shown.value,
          keyName: 'Shack logger',
          onClose: () => {
            closed();
            shown.value = null;
          },
        }),
      ),
    ),
  );
  const wrapper = mount(Host, { attachTo: document.body });
  return { wrapper, shown, closed };
}

afterEach(() => {
  vi.unstubAllGlobals();
  document.body.innerHTML = '';
});

describe('the dialog that shows a new key once', () => {
  it('shows the whole key and says plainly that it will not be shown again', async () => {
    const { wrapper } = mountDialog(SECRET);
    await flushPromises();
    // The modal is teleported to <body>.
    expect(document.querySelector('[data-testid="key-secret"]')?.textContent?.trim()).toBe(SECRET);
    expect(document.querySelector('[data-testid="shown-once"]')?.textContent).toContain('you will not see this key again');
    wrapper.unmount();
  });

  it('copies the key to the clipboard and says so', async () => {
    const writeText = vi.fn(async () => undefined);
    vi.stubGlobal('navigator', { ...navigator, clipboard: { writeText } });
    const { wrapper } = mountDialog(SECRET);
    await flushPromises();
    document.querySelector<HTMLButtonElement>('[data-testid="copy-key"]')!.click();
    await flushPromises();
    expect(writeText).toHaveBeenCalledWith(SECRET);
    expect(document.querySelector('[data-testid="copy-key"]')?.textContent).toContain('Copied');
    wrapper.unmount();
  });

  it('selects the key and tells how to copy it when the browser refuses the clipboard', async () => {
    vi.stubGlobal('navigator', { ...navigator, clipboard: { writeText: vi.fn(async () => Promise.reject(new Error('denied'))) } });
    const { wrapper } = mountDialog(SECRET);
    await flushPromises();
    document.querySelector<HTMLButtonElement>('[data-testid="copy-key"]')!.click();
    await flushPromises();
    expect(document.querySelector('[data-testid="copy-fallback"]')?.textContent).toContain('Ctrl+C');
    wrapper.unmount();
  });

  it('forgets the key when closed: nothing of it stays in the page', async () => {
    const { wrapper, closed } = mountDialog(SECRET);
    await flushPromises();
    document.querySelector<HTMLButtonElement>('[data-testid="close-key-dialog"]')!.click();
    await flushPromises();
    await vi.waitFor(() => expect(document.body.innerHTML).not.toContain(SECRET));
    expect(closed).toHaveBeenCalledOnce();
    wrapper.unmount();
  });

  it('cannot be dismissed by accident with Escape or a click beside it', async () => {
    const { wrapper, closed } = mountDialog(SECRET);
    await flushPromises();
    document.dispatchEvent(new KeyboardEvent('keydown', { key: 'Escape', bubbles: true }));
    await flushPromises();
    expect(closed).not.toHaveBeenCalled();
    expect(document.body.innerHTML).toContain(SECRET);
    wrapper.unmount();
  });
});
