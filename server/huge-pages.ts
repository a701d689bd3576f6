/**
 * Transparent huge pages for large typed arrays. A population's grid of concentrations is tens
 * of megabytes written once; on a virtual machine each 4 KB page touched for the first time
 * costs the kernel several microseconds (measured here: 2.5 ms per MB, a quarter of a second
 * for the 70 MB grid of 1,000 subjects × a year of hourly times). glibc's malloc asks for 2 MB
 * pages when its tunable glibc.malloc.hugetlb is 1 (glibc 2.35 and later; with the kernel's
 * transparent huge pages set to "madvise" or "always"), and typed arrays' memory comes from
 * malloc: the same 100 MB then takes about 14 ms instead of 245. glibc reads the tunable only
 * at process start, so the npm scripts that start the server and the command line set it (a
 * test keeps them equal to this), and so do the benchmark's child processes. Other C libraries
 * and older glibc ignore it.
 */
export const HUGE_PAGES_TUNABLE = 'glibc.malloc.hugetlb=1';

/** The shell prefix of the npm scripts: the user's own tunables kept, this one added. */
export const HUGE_PAGES_SHELL_PREFIX = `GLIBC_TUNABLES=\${GLIBC_TUNABLES:+$GLIBC_TUNABLES:}${HUGE_PAGES_TUNABLE}`;

/** `env` with the tunable added to any the user set (glibc tunables are colon-separated). */
export function withHugePages(env: NodeJS.ProcessEnv): NodeJS.ProcessEnv {
  const own = env.GLIBC_TUNABLES;
  if (own?.split(':').includes(HUGE_PAGES_TUNABLE)) return env;
  return { ...env, GLIBC_TUNABLES: own ? `${own}:${HUGE_PAGES_TUNABLE}` : HUGE_PAGES_TUNABLE };
}
