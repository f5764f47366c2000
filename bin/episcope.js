#!/usr/bin/env node
// Runs the TypeScript sources directly (through tsx), so `npx episcope` works straight after `npm ci`.
import { register } from 'tsx/esm/api';

register();
const { main } = await import('../src/cli/process.ts');
await main(process.argv.slice(2));
