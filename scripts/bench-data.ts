// `npm run bench:data -- [dir]`: builds the benchmark data set (200,000 readings, 20,000 patients, one
// patient with 1,000 results) into a DATA_DIR-style directory; `npm run bench` builds it itself when missing.
import path from 'node:path';
import { buildDataset, DATASET } from '../tests/bench/suite/dataset';

const dir = path.resolve(process.argv[2] ?? '.bench/dataset');
const seconds = await buildDataset(dir);
console.log(`[dataset] ${DATASET.readings.toLocaleString('en-US')} readings, ${DATASET.patients.toLocaleString('en-US')} patients in ${dir} (${seconds.toFixed(0)} s)`);
console.log(`[dataset] serve it with: DATA_DIR=${dir} npm run serve`);
