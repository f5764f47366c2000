import { mount } from 'svelte';
import App from './App.svelte';
import { loadStartupFiles } from './state/startup.ts';
import { cssVariables } from './theme.ts';
import { AnalysisClient } from './worker/client.ts';
import './app.css';

// The palette lives in theme.ts alone; styles read it through CSS variables set here.
for (const [name, value] of Object.entries(cssVariables())) document.documentElement.style.setProperty(name, value);

mount(App, { target: document.getElementById('app')!, props: { analysis: new AnalysisClient(), startup: loadStartupFiles } });
