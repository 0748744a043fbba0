// The house rules on which module may import which, checked over the whole source tree (npm test runs
// this with the unit tests). Each rule names the layer, what it must not reach, and why. The checker is
// a plain function of a file's path and text, so the test also plants bad imports and sees them caught.
import { readdirSync, readFileSync, statSync } from 'node:fs';
import { dirname, join, normalize, relative } from 'node:path';
import { describe, expect, it } from 'vitest';

const root = join(dirname(new URL(import.meta.url).pathname), '..');

interface Rule {
	name: string;
	/** Files the rule applies to (paths from the repository root, '/'-separated). */
	from: (file: string) => boolean;
	/** A resolved import target (a repository path, or `npm:<name>` / `node:<name>`) that breaks it. */
	forbids: (target: string, file: string) => boolean;
}

const under = (dir: string) => (path: string) => path.startsWith(`${dir}/`);
const isModule = (dir: string) => (path: string) =>
	path === dir || path.startsWith(`${dir}/`) || path.startsWith(`${dir}.`);

export const RULES: Rule[] = [
	{
		name: 'routes are thin: they call services, never db/* (SQL and row access)',
		from: under('src/routes'),
		forbids: under('src/lib/server/db')
	},
	{
		name: 'db/* is the bottom layer: no services, sheets or jobs',
		from: under('src/lib/server/db'),
		forbids: (t) =>
			under('src/lib/server/services')(t) ||
			under('src/lib/server/sheets')(t) ||
			isModule('src/lib/server/jobs')(t)
	},
	{
		name: 'sheets read and write files: no db/* or services',
		from: under('src/lib/server/sheets'),
		forbids: (t) => under('src/lib/server/db')(t) || under('src/lib/server/services')(t)
	},
	{
		name: 'services send jobs through jobs/queue.ts only (handlers sit above the services)',
		from: under('src/lib/server/services'),
		forbids: (t) => isModule('src/lib/server/jobs')(t) && !isModule('src/lib/server/jobs/queue')(t)
	},
	{
		name: 'the queue sits below the services',
		from: isModule('src/lib/server/jobs/queue'),
		forbids: (t) => under('src/lib/server/services')(t) || under('src/lib/server/jobs/handlers')(t)
	},
	{
		name: 'the run export is below the services (it takes the run as data)',
		from: isModule('src/lib/server/run-export'),
		forbids: under('src/lib/server/services')
	},
	{
		name: 'the award core is pure: it imports only itself and npm packages',
		// Its tests may bring a solver (runtime/) and generated problems (tools/).
		from: (f) => under('src/lib/award/core')(f) && !f.endsWith('.spec.ts'),
		forbids: (t) => !t.startsWith('npm:') && !under('src/lib/award/core')(t)
	}
];

const SPECIFIER =
	/(?:^|[\s;}])(?:import|export)\s+(?:type\s+)?(?:[\w*${},\s]+?\s+from\s+)?['"]([^'"]+)['"]|import\(\s*['"]([^'"]+)['"]\s*\)/g;

/** The import specifiers of a module's text (static, re-exports and dynamic `import('…')`). */
export function importsOf(text: string): string[] {
	return [...text.matchAll(SPECIFIER)].map((m) => (m[1] ?? m[2])!);
}

/** Where a specifier points: a repository path, or npm:/node: for packages and built-ins. */
export function resolveImport(file: string, specifier: string): string {
	if (specifier.startsWith('node:')) return specifier;
	if (specifier.startsWith('$lib/') || specifier === '$lib')
		return normalize(specifier.replace('$lib', 'src/lib'));
	if (specifier.startsWith('$app/') || specifier.startsWith('$env/')) return `sveltekit:${specifier}`;
	if (specifier.startsWith('.')) return normalize(join(dirname(file), specifier)).replace(/\\/g, '/');
	if (specifier.startsWith('./') || specifier.startsWith('/')) return specifier;
	return `npm:${specifier}`;
}

/** The rules a file breaks, one line per bad import. */
export function violations(file: string, text: string): string[] {
	const found: string[] = [];
	for (const rule of RULES) {
		if (!rule.from(file)) continue;
		for (const specifier of importsOf(text)) {
			const target = resolveImport(file, specifier);
			if (rule.forbids(target, file)) found.push(`${file} imports '${specifier}': ${rule.name}`);
		}
	}
	return found;
}

function sourceFiles(dir: string): string[] {
	return readdirSync(join(root, dir)).flatMap((name) => {
		const path = `${dir}/${name}`;
		if (statSync(join(root, path)).isDirectory()) return sourceFiles(path);
		return /\.(ts|js|svelte)$/.test(name) ? [path] : [];
	});
}

describe('the architecture (which layer may import which)', () => {
	it('holds over the source tree', () => {
		const files = sourceFiles('src');
		expect(files.length).toBeGreaterThan(50);
		const broken = files.flatMap((file) => violations(file, readFileSync(join(root, file), 'utf8')));
		expect(broken).toEqual([]);
	});

	it('finds the imports of a module, static, type-only, re-exported and dynamic', () => {
		const text = [
			"import { a } from './a';",
			"import type { B } from '$lib/server/db/b';",
			"export { c } from '../c';",
			"import 'side-effect';",
			"const d = await import('./d');",
			"import {\n\te,\n\tf\n} from 'npm-package';"
		].join('\n');
		expect(importsOf(text)).toEqual(['./a', '$lib/server/db/b', '../c', 'side-effect', './d', 'npm-package']);
	});

	// Planted bad imports: each must be caught, or the check proves nothing.
	it.each([
		['src/routes/(app)/x/+page.server.ts', "import { db } from '$lib/server/db/knex';"],
		['src/routes/api/x/+server.ts', "import { listItems } from '$lib/server/db/events';"],
		['src/lib/server/db/bids.ts', "import type { ParsedBid } from '../sheets/bid-sheet';"],
		['src/lib/server/db/awards.ts', "import { startRun } from '../services/award-runs';"],
		['src/lib/server/db/awards.ts', "import { jobs } from '../jobs';"],
		['src/lib/server/sheets/item-import.ts', "import type { ItemFields } from '../db/events';"],
		['src/lib/server/services/events.ts', "import { enqueueMail } from '../jobs';"],
		['src/lib/server/services/events.ts', "import { enqueueMail } from '../jobs/index';"],
		['src/lib/server/services/signoff.ts', "import { sendNotice } from '../jobs/handlers/notices';"],
		['src/lib/server/run-export.ts', "import type { RunJson } from './services/award-views';"],
		['src/lib/award/core/model.ts', "import { SolverPool } from '../runtime/pool';"],
		['src/lib/award/core/model.ts', "import { db } from '$lib/server/db/knex';"],
		['src/lib/award/core/engine.ts', "import { readFileSync } from 'node:fs';"]
	])('catches a planted bad import in %s: %s', (file, text) => {
		expect(violations(file, text)).toHaveLength(1);
	});

	it.each([
		['src/routes/x/+page.server.ts', "import { listPlans } from '$lib/server/services/award-plans';"],
		['src/lib/server/services/award-runs.ts', "import { sendJob } from '../jobs/queue';"],
		['src/lib/server/db/awards.ts', "import type { PlanRow } from './tables';"],
		['src/lib/award/core/model.ts', "import { z } from 'zod';\nimport { a } from './problem';"],
		['src/lib/award/core/methods/lp.ts', "import { buildModel } from '../model';"]
	])('lets a good import through in %s: %s', (file, text) => {
		expect(violations(file, text)).toEqual([]);
	});

	it('reports where it looked (paths are relative to the repository)', () => {
		expect(relative(root, join(root, 'src/routes'))).toBe('src/routes');
	});
});
