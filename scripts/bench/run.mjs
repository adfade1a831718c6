// Entry of `npm run bench`: loads the TypeScript benchmark through tsx.
import { register } from 'tsx/esm/api';
register();
const { main } = await import('./run.ts');
process.exitCode = await main(process.argv.slice(2));
