#!/usr/bin/env node
// Entry point of the `posterity` command: loads the TypeScript CLI through tsx.
import { register } from 'tsx/esm/api';
register();
const { main } = await import('./cli.ts');
process.exitCode = await main(process.argv.slice(2));
