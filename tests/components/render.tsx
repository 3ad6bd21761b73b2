// Renders a component into jsdom with react-dom (the web target), as server-side rendering under jsdom fails (MessageChannel), and
// offers the few interactions screen tests need. React Native Web maps testID to data-testid.
import React from 'react';
import { act } from 'react';
import { createRoot, type Root } from 'react-dom/client';

(globalThis as { IS_REACT_ACT_ENVIRONMENT?: boolean }).IS_REACT_ACT_ENVIRONMENT = true;

export type Rendered = {
  container: HTMLElement;
  byTestId: (id: string) => HTMLElement;
  text: () => string;
  press: (id: string) => void;
  type: (id: string, value: string) => void;
  /** Lets pending work finish (a form's schema check runs asynchronously before it submits). */
  settle: () => Promise<void>;
  /** The message shown with a field: the alert beside the input with this testID. */
  fieldMessage: (id: string) => string | null;
  unmount: () => void;
};

export function render(element: React.ReactElement): Rendered {
  const container = document.createElement('div');
  document.body.appendChild(container);
  let root: Root;
  act(() => {
    root = createRoot(container);
    root.render(element);
  });
  const byTestId = (id: string) => {
    const el = container.querySelector(`[data-testid="${id}"]`);
    if (!el) throw new Error(`no element with testID ${id}`);
    return el as HTMLElement;
  };
  return {
    container,
    byTestId,
    text: () => container.textContent ?? '',
    press: (id) => act(() => byTestId(id).click()),
    type: (id, value) =>
      act(() => {
        const input = byTestId(id) as HTMLInputElement | HTMLTextAreaElement;
        // A multiline field is a textarea: its own prototype's setter, so React sees the change.
        const proto = input instanceof HTMLTextAreaElement ? HTMLTextAreaElement.prototype : HTMLInputElement.prototype;
        const setter = Object.getOwnPropertyDescriptor(proto, 'value')!.set!;
        setter.call(input, value);
        input.dispatchEvent(new Event('input', { bubbles: true }));
      }),
    settle: () =>
      act(async () => {
        await new Promise((resolve) => setTimeout(resolve, 0));
      }),
    fieldMessage: (id) => byTestId(id).parentElement?.querySelector('[role="alert"]')?.textContent ?? null,
    unmount: () => {
      act(() => root.unmount());
      container.remove();
    },
  };
}
