/**
 * Where the store lives: `tidemark.sqlite` in the data folder, which is TIDEMARK_DATA when
 * set, else `data/` beside the project (git ignores it).
 */
import { join, resolve } from 'node:path';

export const storeFileName = 'tidemark.sqlite';

export function dataFolderOf(env: Record<string, string | undefined>, projectRoot: string): string {
  const set = env.TIDEMARK_DATA?.trim();
  return set ? resolve(set) : join(projectRoot, 'data');
}

export function storeFileOf(env: Record<string, string | undefined>, projectRoot: string): string {
  return join(dataFolderOf(env, projectRoot), storeFileName);
}
