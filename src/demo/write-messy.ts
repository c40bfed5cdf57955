import { fileURLToPath } from 'node:url';
import { writeMessyFiles } from './messy.js';

// `npm run -s demo:messy`: regenerates demo-data/messy from its seed.
const folder = fileURLToPath(new URL('../../demo-data/messy', import.meta.url));
const files = writeMessyFiles(folder);
process.stdout.write(`Wrote ${files.length} messy files and README.md to ${folder}\n`);
