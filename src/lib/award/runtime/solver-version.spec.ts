import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { solverVersion } from './solver-version';

describe('solverVersion', () => {
	it('names HiGHS and the installed version of the npm highs package', () => {
		const { version } = JSON.parse(readFileSync('node_modules/highs/package.json', 'utf8')) as {
			version: string;
		};
		expect(solverVersion).toBe(`HiGHS (npm highs ${version})`);
	});
});
