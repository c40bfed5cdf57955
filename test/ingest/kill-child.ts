/**
 * Child process of the crash-safety test (import-kill.test.ts): imports one receipts file into a
 * database and says on stdout when the import has started and when it is done, so the parent can
 * kill it at a random moment in between.
 */
import { importFile } from '../../src/ingest/import-file.js';
import { openDatabase } from '../../src/store/database.js';

const [databasePath, filePath] = process.argv.slice(2);
const db = openDatabase(databasePath);
process.stdout.write('started\n');
let reading = false;
const result = await importFile(db, {
  path: filePath,
  kind: 'receipts',
  onProgress: ({ phase }) => {
    if (phase === 'reading' && !reading) {
      reading = true;
      process.stdout.write('reading\n');
    }
  },
});
db.close();
process.stdout.write(`done ${JSON.stringify(result)}\n`);
