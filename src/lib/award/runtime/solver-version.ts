// The solver's name and the installed version of the npm `highs` package, as recorded with each run
// ("HiGHS (npm highs 1.15.3)"). Read once from the package's own package.json, found by module
// resolution so that it works bundled or not; without it the version is left out.
import { readFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import { dirname, join } from 'node:path';

function installedVersion(): string | null {
	try {
		const wasm = createRequire(import.meta.url).resolve('highs/runtime');
		const { version } = JSON.parse(readFileSync(join(dirname(wasm), '..', 'package.json'), 'utf8')) as {
			version: string;
		};
		return version;
	} catch {
		return null;
	}
}

const version = installedVersion();

/** "HiGHS (npm highs <version>)", or "HiGHS (npm highs)" when the version cannot be read. */
export const solverVersion: string = version ? `HiGHS (npm highs ${version})` : 'HiGHS (npm highs)';
