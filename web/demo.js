// `#demo` in the address opens the invented demo cohort (a fictional
// hospital's discharge-planning study). The core offers it as a method
// `demo_cohort({seed})` returning CSV bytes; until a build has that method,
// the page says the demo is coming instead of pretending.

import { showNotice, clearNotice, showError } from './banner.js';

/** The seed of the demo cohort every user sees, so everyone sees the same. */
export const DEMO_SEED = 20240;

/** Whether the address asks for the demo. */
export function wantsDemo(loc) {
  return loc.hash === '#demo';
}

/** Open the demo cohort in the data screen if the address asks for it. */
export async function openDemoIfAsked(engine, dataScreen) {
  if (!wantsDemo(window.location)) return;
  let info;
  try {
    info = await engine.ready();
  } catch {
    return; // The start-up failure is already on the error banner.
  }
  if (!info.methods.includes('demo_cohort')) {
    showNotice(
      'The demo cohort (a fictional hospital’s discharge-planning study) is coming in a later version of pairsight. ' +
        'Until then, open a CSV file of your own to try the Data step.',
    );
    return;
  }
  clearNotice();
  try {
    const bytes = await engine.call('demo_cohort', { seed: DEMO_SEED });
    dataScreen.openBytes('demo cohort (fictional)', bytes);
  } catch (err) {
    showError(err, 'The demo cohort could not be made');
  }
}
