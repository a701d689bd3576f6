/**
 * Builds the server, its simulation worker, the command line and its worker as JavaScript
 * (esbuild: node 20, ES modules) into dist/server/, so that `npm start`, `npm run cli` and
 * every worker thread start with plain node instead of compiling the TypeScript at each start.
 *
 *   node scripts/build-server.mjs [--if-stale] [--quiet] [--outdir DIR]
 *
 * --if-stale  build only when an output is missing or a source it was built from (or
 *             package.json, package-lock.json, this script) is newer than the last build.
 * --quiet     print nothing unless the build fails (the command line's scripts).
 * --outdir    another folder inside the repository (a test's build); default dist/server.
 *
 * What the build does beyond bundling, and why:
 * - mathjs, zod and the other pure-JavaScript packages are bundled: mathjs is imported
 *   through its factory functions (models/scenario/units.ts), so only the unit part is kept.
 *   pdfkit stays external: it reads its standard fonts' .afm files from its own folder, which
 *   a bundle does not carry. express and helmet stay external too (CommonJS that requires
 *   node's modules; the server loads them once).
 * - Code splitting: the report writer (pdfkit and its fonts) is imported with import() by
 *   the workers, so it is a chunk of its own that a plain simulation never loads; modules
 *   shared by the entries are shared chunks, loaded once per thread.
 * - Entries keep their own URL in import.meta.url, so they find the built workers beside
 *   them. Every other module sees its source file's URL instead (rewritten below), so that
 *   what it reads relative to itself (samples/, package.json, the fonts' package) resolves
 *   as it does from the sources.
 * - The command line gets a `#!/usr/bin/env node` line and is made executable (the
 *   package's `bin`, for `npx tidemark`).
 * - A build keeps the previous build's chunks, so a server still running the previous
 *   build can load its report chunk later; older ones are removed.
 */
import { build } from 'esbuild';
import { chmodSync, mkdirSync, readFileSync, renameSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { dirname, isAbsolute, join, relative, resolve, sep } from 'node:path';
import { fileURLToPath } from 'node:url';

const root = resolve(dirname(fileURLToPath(import.meta.url)), '..');
const thisScript = fileURLToPath(import.meta.url);

/** Entry name (the output file's name without .js) → source, relative to the root. */
export const entries = {
  main: 'server/main.ts',
  'simulation-worker': 'server/simulation-worker.ts',
  cli: 'server/cli.ts',
  'cli-worker': 'server/cli-worker.ts',
  'population-worker': 'server/population-worker.ts',
  'proposals-worker': 'server/proposals-worker.ts',
};
/** Packages left to node's own loading (see above). */
const external = ['pdfkit', 'express', 'helmet', 'better-sqlite3'];
/** The program's file name, for the `bin` line. */
const programEntry = 'cli';
const infoFile = 'build-info.json';

function parseArgs(argv) {
  const args = { ifStale: false, quiet: false, outdir: join(root, 'dist', 'server') };
  for (let i = 0; i < argv.length; i++) {
    const a = argv[i];
    if (a === '--if-stale') args.ifStale = true;
    else if (a === '--quiet') args.quiet = true;
    else if (a === '--outdir' && i + 1 < argv.length) args.outdir = resolve(root, argv[++i]);
    else throw new Error(`unknown argument '${a}' (usage: build-server.mjs [--if-stale] [--quiet] [--outdir DIR])`);
  }
  const inside = relative(root, args.outdir);
  // External packages are found from the built files' folder upwards: the folder must lie in the repository.
  if (inside === '' || inside.startsWith('..') || isAbsolute(inside)) throw new Error(`--outdir must be a folder inside ${root}`);
  return args;
}

function readInfo(outdir) {
  try {
    return JSON.parse(readFileSync(join(outdir, infoFile), 'utf8'));
  } catch {
    return null;
  }
}

const mtime = (path) => {
  try {
    return statSync(path).mtimeMs;
  } catch {
    return null;
  }
};

/**
 * Why the build in `outdir` must be redone, or null when it is up to date: every output is
 * there, and no input it was built from changed after the build started.
 */
export function staleReason(outdir = join(root, 'dist', 'server')) {
  const info = readInfo(outdir);
  if (!info) return 'no build yet';
  for (const name of Object.keys(entries)) if (!info.outputs.includes(`${name}.js`)) return `the build lacks ${name}.js`;
  for (const file of info.outputs) if (mtime(join(outdir, file)) === null) return `${file} is missing`;
  const watched = [...info.inputs, 'package.json', 'package-lock.json', relative(root, thisScript)];
  for (const input of watched) {
    const t = mtime(join(root, input));
    if (t === null) {
      if (input === 'package-lock.json') continue;
      return `${input} is gone`;
    }
    if (t > info.startedAt) return `${input} changed`;
  }
  return null;
}

/**
 * Rewrites `import.meta.url` in a non-entry module to its source file's URL, expressed
 * relative to the output folder, where every output file (entry or chunk) lies.
 */
function sourceUrlPlugin(outdir, entrySources) {
  return {
    name: 'source-url',
    setup(b) {
      b.onLoad({ filter: /\.ts$/ }, (args) => {
        if (args.path.includes(`${sep}node_modules${sep}`)) return undefined;
        const text = readFileSync(args.path, 'utf8');
        if (entrySources.has(args.path) || !text.includes('import.meta.url')) return { contents: text, loader: 'ts' };
        const fromOut = relative(outdir, args.path).split(sep).join('/');
        const contents = text.replaceAll('import.meta.url', `new URL(${JSON.stringify(fromOut)}, import.meta.url).href`);
        return { contents, loader: 'ts' };
      });
    },
  };
}

export async function buildServer({ outdir, quiet }) {
  const startedAt = Date.now();
  const entrySources = new Set(Object.values(entries).map((s) => join(root, s)));
  const result = await build({
    absWorkingDir: root,
    entryPoints: Object.fromEntries(Object.entries(entries).map(([name, src]) => [name, join(root, src)])),
    bundle: true,
    splitting: true,
    platform: 'node',
    format: 'esm',
    target: 'node20',
    outdir,
    chunkNames: '[name]-[hash]',
    external,
    sourcemap: 'linked',
    metafile: true,
    write: false,
    logLevel: quiet ? 'error' : 'warning',
    legalComments: 'none',
    plugins: [sourceUrlPlugin(outdir, entrySources)],
  });
  mkdirSync(outdir, { recursive: true });
  const outputs = [];
  for (const file of result.outputFiles) {
    const name = relative(outdir, file.path).split(sep).join('/');
    let contents = file.contents;
    if (name === `${programEntry}.js`) contents = Buffer.concat([Buffer.from('#!/usr/bin/env node\n'), Buffer.from(contents)]);
    // Whole files only: a server starting meanwhile never reads half a chunk.
    const temporary = `${file.path}.${process.pid}.tmp`;
    writeFileSync(temporary, contents);
    renameSync(temporary, file.path);
    if (name === `${programEntry}.js`) chmodSync(file.path, 0o755);
    outputs.push(name);
  }
  const inputs = Object.keys(result.metafile.inputs).filter((p) => !p.startsWith('node_modules/') && !p.includes('/node_modules/'));
  const previous = readInfo(outdir);
  // The previous build's files stay (a running server may still load its chunks); older ones go.
  for (const file of previous?.previousOutputs ?? []) {
    if (!outputs.includes(file) && !(previous?.outputs ?? []).includes(file)) rmSync(join(outdir, file), { force: true });
  }
  const bytes = Object.fromEntries(Object.entries(result.metafile.outputs).map(([p, o]) => [relative(outdir, resolve(root, p)).split(sep).join('/'), o.bytes]));
  // Which files and packages each output loads at once ('import') and on demand ('import()'): a test
  // reads it to show that a simulation never loads the report writer.
  const imports = {};
  for (const [p, o] of Object.entries(result.metafile.outputs)) {
    if (!p.endsWith('.js')) continue;
    const name = (q) => (o.imports.find((i) => i.path === q)?.external ? q : relative(outdir, resolve(root, q)).split(sep).join('/'));
    imports[name(p)] = {
      static: o.imports.filter((i) => i.kind === 'import-statement').map((i) => name(i.path)),
      dynamic: o.imports.filter((i) => i.kind === 'dynamic-import').map((i) => name(i.path)),
    };
  }
  // The packages' files that made it into the outputs, and their bytes there (how much of
  // mathjs the factory functions keep, say).
  const packages = {};
  for (const o of Object.values(result.metafile.outputs)) {
    for (const [input, { bytesInOutput }] of Object.entries(o.inputs)) {
      const at = input.lastIndexOf('node_modules/');
      if (at < 0 || bytesInOutput === 0) continue;
      const rest = input.slice(at + 'node_modules/'.length).split('/');
      const name = rest[0].startsWith('@') ? `${rest[0]}/${rest[1]}` : rest[0];
      const entry = (packages[name] ??= { bytes: 0, files: [] });
      entry.bytes += bytesInOutput;
      entry.files.push(rest.slice(name.split('/').length).join('/'));
    }
  }
  const info = { startedAt, builtAt: Date.now(), outputs, previousOutputs: previous?.outputs ?? [], inputs, bytes, imports, packages };
  // Written last and whole: a build-info names only outputs already in place.
  const infoTemporary = join(outdir, `${infoFile}.${process.pid}.tmp`);
  writeFileSync(infoTemporary, JSON.stringify(info, null, 2) + '\n');
  renameSync(infoTemporary, join(outdir, infoFile));
  return info;
}

async function main() {
  let args;
  try {
    args = parseArgs(process.argv.slice(2));
  } catch (e) {
    console.error(e.message);
    process.exit(2);
  }
  if (args.ifStale) {
    const why = staleReason(args.outdir);
    if (why === null) return;
    if (!args.quiet) console.log(`Building the server and command line (${why})…`);
  }
  try {
    const info = await buildServer(args);
    if (!args.quiet) {
      const js = info.outputs.filter((f) => f.endsWith('.js'));
      const total = js.reduce((s, f) => s + (info.bytes[f] ?? 0), 0);
      console.log(`built ${js.length} files (${(total / 1024).toFixed(0)} KiB) in ${relative(root, args.outdir)}/ in ${((info.builtAt - info.startedAt) / 1000).toFixed(1)} s`);
    }
  } catch (e) {
    // esbuild has printed the errors with their file and line.
    console.error(`the server build failed${e?.errors?.length ? '' : `: ${e?.message ?? e}`}; run \`npm run build\` to see why`);
    process.exit(1);
  }
}

if (process.argv[1] && resolve(process.argv[1]) === thisScript) await main();
