/**
 * The entry of a clip page: one HTML file that holds this viewer and the clip's step file inline
 * (base64 in a script element), opened from file:// with no server and no network. Analysis runs
 * in-thread, since a page opened from disk cannot start a module worker.
 */
import { mount } from 'svelte';
import App from './App.svelte';
import { cssVariables } from './theme.ts';
import { InlineAnalysis } from './worker/engine.ts';
import type { Session } from './state/session.svelte.ts';
import './app.css';

for (const [name, value] of Object.entries(cssVariables())) document.documentElement.style.setProperty(name, value);

function inlineClip(): { name: string; bytes: Uint8Array } {
  const el = document.getElementById('episcope-clip');
  if (!el) throw new Error('this page holds no clip data (no #episcope-clip element)');
  const text = atob((el.textContent ?? '').trim());
  const bytes = new Uint8Array(text.length);
  for (let i = 0; i < text.length; i++) bytes[i] = text.charCodeAt(i);
  return { name: el.dataset.name ?? 'clip.steps', bytes };
}

mount(App, {
  target: document.getElementById('app')!,
  props: {
    analysis: new InlineAnalysis(),
    mode: 'clip',
    startup: async (session: Session) => {
      const { name, bytes } = inlineClip();
      session.addFile(name, bytes);
      if (!session.fromHash(location.hash)) session.selectFile(0);
    },
  },
});
