// One benchmark task in its own process (so its peak memory is its own): loads the
// TypeScript task module through tsx and prints the result as one JSON line.
import { register } from 'tsx/esm/api';
register();
const { runTask } = await import('./tasks.ts');
const result = await runTask(process.argv[2], process.argv.slice(3));
process.stdout.write(`\nBENCH-RESULT ${JSON.stringify({ ...result, maxRssMB: process.resourceUsage().maxRSS / 1024 })}\n`);
process.exit(0);
