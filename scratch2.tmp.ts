import { generateProblem } from './src/lib/award/generate';
import { buildModel } from './src/lib/award/model';
const problem = generateProblem({ items: 10000, suppliers: 50, seed: 42, capacity: true });
buildModel(problem);
const t = performance.now(); buildModel(problem); console.log('build', performance.now() - t);
