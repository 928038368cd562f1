/** Where the project lives, from a script's own module URL, for any install path. */
import path from 'node:path';
import { fileURLToPath } from 'node:url';

/**
 * The directory `levelsUp` above the module at `moduleUrl` (its `import.meta.url`).
 * `fileURLToPath` decodes `%20` and friends; `new URL(…).pathname` would keep them and a
 * checkout under "My Projects" would look for files that do not exist.
 */
export function projectRootFrom(moduleUrl: string, levelsUp: number): string {
  return path.resolve(path.dirname(fileURLToPath(moduleUrl)), ...Array<string>(levelsUp).fill('..'));
}
