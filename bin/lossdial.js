#!/usr/bin/env node
// Runs the TypeScript sources through tsx's loader so `npx lossdial` works right after `npm ci`.
import { register } from 'tsx/esm/api';

register();
const { main } = await import('../src/cli/main.ts');
const code = await main(process.argv.slice(2));
process.exitCode = code;
