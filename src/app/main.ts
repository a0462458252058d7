/** Browser entry point: start the app, and never leave a blank page on an unexpected error. */
import { App } from './app.js';
import './styles.css';

const root = document.getElementById('app');

function fatal(message: string): void {
  const box = document.querySelector<HTMLElement>('[data-testid="error"]');
  const text = `Error: ${message}`;
  if (box) {
    const p = document.createElement('div');
    p.className = 'message error';
    p.dataset.kind = 'error';
    p.textContent = text;
    box.append(p);
    box.hidden = false;
  } else if (root) {
    const p = document.createElement('div');
    p.className = 'messages';
    p.setAttribute('data-testid', 'error');
    p.setAttribute('role', 'alert');
    p.textContent = text;
    root.prepend(p);
  }
}

window.addEventListener('error', (e) => fatal(e.message || 'an unexpected error occurred'));
window.addEventListener('unhandledrejection', (e) => fatal(e.reason instanceof Error ? e.reason.message : String(e.reason)));

if (root) {
  const app = new App(root);
  (window as unknown as { shimmy: App }).shimmy = app;
  app.start().catch((e: unknown) => fatal(e instanceof Error ? e.message : String(e)));
}
