/**
 * The long version of the store's kill test (tests/store/reliability.test.ts runs 3 rounds):
 * the built server is killed with SIGKILL at a random 50–400 ms into a burst of saves from
 * three clients, restarted on the same file, and every version it acknowledged so far must be
 * there with the JSON text sent, with SQLite's integrity check 'ok'.
 *
 *   npx tsx scripts/store-kill-check.ts [rounds=50] [seed]
 *
 * Prints one line per round and a summary; exits 1 when any round lost or changed an
 * acknowledged version, or the file failed the check. The data folder is temporary.
 */
import { buildServer, killRounds, removeFolder, tempFolder, type KillRound } from '../tests/store/temp-store.ts';

function wholeArg(text: string | undefined, fallback: number, what: string): number {
  if (text === undefined) return fallback;
  const n = Number(text);
  if (!Number.isSafeInteger(n) || n < 1) {
    console.error(`${what} must be a whole number above 0 (got '${text}')`);
    process.exit(2);
  }
  return n;
}

async function main(): Promise<void> {
  const rounds = wholeArg(process.argv[2], 50, 'rounds');
  const seed = wholeArg(process.argv[3], Date.now() % 2_147_483_647, 'seed');
  const server = buildServer();
  const folder = tempFolder();
  const started = Date.now();
  console.log(`store kill check: ${rounds} rounds, seed ${seed}, data in ${folder}`);
  let results: KillRound[] = [];
  try {
    results = await killRounds(server, folder, rounds, seed, (r) => {
      const bad = r.missing.length > 0 || r.integrity !== 'ok' || r.inconsistent > 0 || !r.availableAfterRestart;
      console.log(
        `round ${r.round}: killed after ${r.killAfterMs} ms; ${r.acknowledged} acknowledged, ${r.unanswered} cut off; ` +
          `${r.missing.length} missing or changed; integrity ${r.integrity}${r.inconsistent ? `; ${r.inconsistent} scenarios disagree with their versions` : ''}${bad ? '  <-- FAILED' : ''}`,
      );
      for (const m of r.missing.slice(0, 10)) console.log(`  ${m}`);
    });
  } finally {
    removeFolder(folder);
  }
  const acknowledged = results.reduce((s, r) => s + r.acknowledged, 0);
  const cutOff = results.reduce((s, r) => s + r.unanswered, 0);
  const failed = results.filter((r) => r.missing.length > 0 || r.integrity !== 'ok' || r.inconsistent > 0 || !r.availableAfterRestart);
  const seconds = ((Date.now() - started) / 1000).toFixed(0);
  console.log(
    `store kill check: ${results.length} rounds, ${acknowledged} saves acknowledged, ${cutOff} cut off by the kill; ` +
      `${failed.length === 0 ? 'none lost, integrity ok in every round' : `${failed.length} rounds FAILED (rounds ${failed.map((r) => r.round).join(', ')})`} (seed ${seed}, ${seconds} s)`,
  );
  process.exit(failed.length === 0 ? 0 : 1);
}

main().catch((e: unknown) => {
  console.error(e instanceof Error ? e.message : String(e));
  process.exit(1);
});
