import { solveAward } from './src/lib/award/engine';
import { benchmarkRules, generateProblem } from './src/lib/award/generate';
import { SolverPool } from './src/lib/award/pool';
import { buildModel } from './src/lib/award/model';
const pool = new SolverPool();
for (const [items, suppliers, rules] of [[1000, 20, false], [1000, 20, true], [10000, 50, false]] as const) {
  const t0 = performance.now();
  const problem = generateProblem({ items, suppliers, seed: 42, capacity: true, rules: rules ? benchmarkRules : [] });
  const t1 = performance.now();
  const m = buildModel(problem);
  const t2 = performance.now();
  const r = await solveAward(problem, pool, { timeLimit: 60, gap: 1e-4 });
  const t3 = performance.now();
  console.log(items, suppliers, rules, 'gen', Math.round(t1-t0), 'build', Math.round(t2-t1), 'solve+all', Math.round(t3-t2), r.status, r.method, r.totalCost, r.gap, 'rss', Math.round(process.memoryUsage().rss/1e6), m.numCols, m.numRows, m.integers);
}
await pool.close();
