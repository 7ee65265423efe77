#!/usr/bin/env node
// Entry point of the `brink` command: registers the TypeScript loader (tsx)
// and runs server/cli.ts, so no build step is needed.
import { register } from 'tsx/esm/api';

register();
const { main } = await import('../server/cli.ts');
process.exitCode = await main(process.argv.slice(2));
