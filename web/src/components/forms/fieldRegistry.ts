import { computed, inject, onBeforeUnmount, provide, reactive, ref, watchEffect, type ComputedRef, type InjectionKey, type Ref } from 'vue';

/** A field on screen: its label as people read it and the request path it fills (`line.lengthM`). */
interface FieldEntry {
  label: string;
  apiField: string | undefined;
  /** The field's own refusal (out of range, not a number), shown at it and blocking the send. */
  error: string | null;
}

/**
 * The fields of one form, so that problems can be told at the field they concern and in the form's
 * own words: the API names `reflectedPowerW`, people read "Reflected power (W)".
 */
export interface FieldRegistry {
  entries: Map<string, FieldEntry>;
  /** Messages per request path, from the server's `errors[]` or the form's own schema check. */
  messages: Ref<Record<string, string>>;
  /** Fields refusing their value right now, as "Label: why". */
  refusals: ComputedRef<string[]>;
  labelFor(apiField: string): string | undefined;
}

const KEY: InjectionKey<FieldRegistry> = Symbol('gammaline-fields');

export function provideFieldRegistry(): FieldRegistry {
  const entries = reactive(new Map<string, FieldEntry>());
  const messages = ref<Record<string, string>>({});
  const refusals = computed(() => [...entries.values()].filter((e) => e.error).map((e) => `${e.label}: ${e.error}`));
  function labelFor(apiField: string): string | undefined {
    for (const entry of entries.values()) if (entry.apiField === apiField) return entry.label;
    return undefined;
  }
  const registry: FieldRegistry = { entries, messages, refusals, labelFor };
  provide(KEY, registry);
  return registry;
}

/** Registers a field with the nearest registry, if any; returns the message the form holds for it. */
export function useFieldRegistration(
  id: () => string,
  entry: () => Omit<FieldEntry, 'error'>,
  error: () => string | null,
): ComputedRef<string | undefined> {
  const registry = inject(KEY, null);
  if (registry) {
    let current = id();
    watchEffect(() => {
      if (current !== id()) registry.entries.delete(current);
      current = id();
      registry.entries.set(current, { ...entry(), error: error() });
    });
    onBeforeUnmount(() => registry.entries.delete(current));
  }
  return computed(() => {
    const apiField = entry().apiField;
    return registry && apiField ? registry.messages.value[apiField] : undefined;
  });
}

/** "path: message" lines (the forms' schema issues) as a path → message record. */
export function messagesByPath(lines: readonly string[]): Record<string, string> {
  const out: Record<string, string> = {};
  for (const line of lines) {
    const at = line.indexOf(': ');
    if (at > 0 && !line.slice(0, at).includes(' ')) out[line.slice(0, at)] ??= line.slice(at + 2);
  }
  return out;
}
