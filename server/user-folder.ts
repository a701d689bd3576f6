/**
 * The folder the user typed the command in, against which every path argument is read.
 *
 * `npm run cli` starts the program in the package's own folder, so process.cwd() is the
 * repository root there, and npm passes the folder the user was in as INIT_CWD. A program
 * started by an npm script inherits INIT_CWD too, even one started elsewhere (a test run
 * under `npm test` that starts the command line in a temporary folder): INIT_CWD is taken
 * only when the process stands in the package folder npm moved it to (npm_package_json's
 * folder). Otherwise, as when run directly with node or through `npx`, the current folder.
 */
import { dirname, isAbsolute, resolve } from 'node:path';

export function userFolder(env: Record<string, string | undefined>, cwd: string): string {
  const initial = env.INIT_CWD;
  const packageJson = env.npm_package_json;
  if (initial && isAbsolute(initial) && packageJson && resolve(dirname(packageJson)) === resolve(cwd)) return resolve(initial);
  return resolve(cwd);
}

/** A path argument as the user meant it: relative to their folder, absolute as given. */
export function fromUserFolder(folder: string, path: string): string {
  return resolve(folder, path);
}
