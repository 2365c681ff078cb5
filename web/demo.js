// `#demo` in the address opens the invented demo cohort (a fictional
// hospital's discharge-planning study), generated in the worker by the core
// (the same bytes as the committed demo/cohort.csv), with its study file,
// and runs its designs. A build whose core has no demo generator says so.

import { showNotice, clearNotice, showError } from './banner.js';
import { store, changed, saveStudy, normalizeStudy } from './store.js';
import { plain, prepare, runDesigns } from './work.js';

/** Whether the address asks for the demo. */
export function wantsDemo(loc) {
  return loc.hash === '#demo';
}

/** Open the demo cohort, its study and its designs if the address asks. */
export async function openDemoIfAsked(engine, dataScreen, go) {
  if (!wantsDemo(window.location)) return;
  let info;
  try {
    info = await engine.ready();
  } catch {
    return; // The start-up failure is already on the error banner.
  }
  if (!info.methods.includes('demo_cohort') || !info.methods.includes('demo_study')) {
    showNotice(
      'The demo cohort (a fictional hospital’s discharge-planning study) is coming in a later version of pairsight. ' +
        'Until then, open a CSV file of your own to try the steps.',
    );
    return;
  }
  clearNotice();
  try {
    go('data');
    const bytes = await plain('demo_cohort', {});
    await dataScreen.openBytes('demo cohort (fictional)', bytes);
    if (!store.file) return; // the data step showed the error
    const text = await plain('demo_study', {});
    store.study = normalizeStudy(await plain('study_from_toml', { text }));
    saveStudy();
    changed('study');
    await prepare();
    const names = store.study.designs.map((d) => d.name);
    await runDesigns(names);
    store.compare = names.slice(0, 6);
    showNotice('Demo: an invented cohort of a fictional hospital. Its designs have been run; explore the steps on the left.');
    go('balance');
  } catch (err) {
    if (err?.kind !== 'cancelled') showError(err, 'The demo could not be opened');
  }
}
