// Helpers of the packet and report browser tests: the command-line binary,
// scratch folders, and an invented cohort full of markup.

import { execFileSync, spawnSync } from 'node:child_process';
import { mkdtemp, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { ROOT } from './support.mjs';

let built = null;

/**
 * The command-line binary: `$PAIRSIGHT_BIN`, or the debug build, brought up
 * to date once per test process (a no-op when `cargo test` just built it).
 */
export function pairsightBin() {
  if (process.env.PAIRSIGHT_BIN) return process.env.PAIRSIGHT_BIN;
  if (!built) {
    execFileSync('cargo', ['build', '--quiet', '--package', 'pairsight-cli'], { cwd: ROOT, stdio: 'inherit' });
    built = path.join(ROOT, 'target/debug/pairsight');
  }
  return built;
}

/** Run `pairsight` with arguments; returns { status, stdout, stderr }. */
export function pairsight(args) {
  const r = spawnSync(pairsightBin(), args, { cwd: ROOT, encoding: 'utf8' });
  return { status: r.status, stdout: r.stdout, stderr: r.stderr };
}

/** A fresh temporary folder removed when test `t` ends. */
export async function scratch(t) {
  const dir = await mkdtemp(path.join(tmpdir(), 'pairsight-packet-'));
  t.after(() => rm(dir, { recursive: true, force: true }));
  return dir;
}

/** An invented cohort with markup in a column name, a label and notes. */
export async function hostileCohort(dir) {
  const col = '<img src=x onerror=alert(9)>';
  const rows = ['pid,arm,age,ward,"' + col.replaceAll('"', '""') + '",outcome,note'];
  let seed = 7;
  const rand = () => {
    seed = (seed * 1103515245 + 12345) % 2147483648;
    return seed / 2147483648;
  };
  const notes = [
    '</script><script>alert(1)</script> lives alone',
    '"><img src=x onerror=alert(2)> walks with a frame',
    "<svg onload=alert(3)> javascript:alert(4) lives with son",
    '</textarea><b>bold?</b> lives alone, frail',
  ];
  for (let i = 0; i < 80; i += 1) {
    const age = Math.round(50 + 40 * rand());
    const treated = rand() < 0.25 + (age - 50) / 120;
    const ward = rand() < 0.5 ? '"<i>east</i>"' : 'west';
    const lab = Math.round(100 * rand());
    const y = rand() < 0.3 ? 1 : 0;
    const note = notes[i % notes.length].replaceAll('"', '""');
    rows.push(`H${String(i).padStart(3, '0')},${treated ? 1 : 0},${age},${ward},${lab},${y},"${note}"`);
  }
  const data = path.join(dir, 'hostile.csv');
  await writeFile(data, rows.join('\n') + '\n');
  const study = path.join(dir, 'hostile.study.toml');
  await writeFile(study, [
    '[columns]', 'id = "pid"', 'group = "arm"', 'treated = "1"', 'outcomes = ["outcome"]',
    `covariates = ["age", "ward", ${JSON.stringify(col)}]`, 'notes = "note"', 'kinds = { ward = "categorical" }',
    '', '[[concepts]]', 'name = "alone"', 'terms = ["lives alone"]',
    '', '[[designs]]', 'name = "plain"', 'score_terms = ["age", "ward"]', '',
  ].join('\n'));
  return { data, study, col, notes };
}
