// npm run award:schema: writes the award problem's JSON Schema to docs/award-problem.schema.json.
import { writeFileSync } from 'node:fs';
import { problemJsonSchema } from '../core/problem';

writeFileSync('docs/award-problem.schema.json', `${JSON.stringify(problemJsonSchema(), null, 2)}\n`);
console.log('docs/award-problem.schema.json written');
