// Entry of `npm start` and `npm test`. Plain Node with no dependencies, because it runs before
// node_modules exists: it installs what is missing, then hands over to stack.ts under tsx.
import { spawn, spawnSync } from 'node:child_process';
import { existsSync, statSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';

const root = join(dirname(fileURLToPath(import.meta.url)), '..');
const command = process.argv[2] ?? 'start';

function installedLockIsCurrent() {
	const installed = join(root, 'node_modules', '.package-lock.json');
	const lock = join(root, 'package-lock.json');
	if (!existsSync(installed) || !existsSync(join(root, 'node_modules', 'tsx'))) return false;
	return statSync(installed).mtimeMs >= statSync(lock).mtimeMs;
}

if (!installedLockIsCurrent()) {
	console.log('[tenderloom] installing npm packages (npm ci)…');
	const result = spawnSync('npm', ['ci', '--no-audit', '--no-fund'], { cwd: root, stdio: 'inherit' });
	if (result.status !== 0) {
		console.error('[tenderloom] npm ci failed; see the messages above.');
		process.exit(result.status ?? 1);
	}
}

const child = spawn(
	process.execPath,
	['--import', 'tsx', join(root, 'docker-free-fakes', 'stack.ts'), command, ...process.argv.slice(3)],
	{ cwd: root, stdio: 'inherit' }
);
// The stack runner owns shutdown; this process only waits for it and passes its exit code on.
for (const signal of ['SIGINT', 'SIGTERM', 'SIGHUP']) {
	process.on(signal, () => child.kill(signal));
}
// `kill -TERM <npm pid>`: npm 11 passes the signal to the shell that runs this script, the shell dies and
// this process is re-parented without a signal of its own. Seen as a new parent: stop the stack.
const parent = process.ppid;
const lifeline = setInterval(() => {
	if (process.ppid === parent) return;
	clearInterval(lifeline);
	child.kill('SIGTERM');
}, 500);
child.on('exit', (code, signal) => process.exit(code ?? (signal ? 1 : 0)));
