#!/usr/bin/env node
// Runs the TypeScript entry point through tsx's loader (the project ships TypeScript sources, no build step).
import { register } from 'tsx/esm/api';

register();
const { main } = await import('../src/main.ts');
process.exitCode = await main(process.argv.slice(2));
