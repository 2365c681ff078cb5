// Start-up: the engine (a worker with the wasm core), the progress strip,
// the step rail, the screens, and the demo hook.

import { byTestId, replaceChildren } from './dom.js';
import { locateCore, startEngine } from './engine.js';
import { showError, clearNotice } from './banner.js';
import { mountRail, STEPS } from './rail.js';
import { mountData } from './screens/data.js';
import { mountNotes } from './screens/notes.js';
import { mountDesigns } from './screens/designs.js';
import { mountBalance } from './screens/balance.js';
import { mountPairs } from './screens/pairs.js';
import { mountExport } from './screens/export.js';
import { mountEffect } from './screens/effect.js';
import { mountReview } from './screens/review.js';
import { openDemoIfAsked } from './demo.js';
import { mountWork } from './work.js';
import { store, saveStep, loadStep } from './store.js';

const engine = startEngine(locateCore(document));
mountWork(engine);
const screen = byTestId('screen');
let dataScreen = null;

/** Show step `step`. */
function go(step) {
  const known = STEPS.find((s) => s.id === step && s.built);
  const id = known && (step === 'data' || store.study) ? step : 'data';
  mountRail(byTestId('step-rail'), id, go);
  screen.dataset.step = id;
  replaceChildren(screen);
  if (id === 'data') dataScreen = mountData(screen, engine, () => go('notes'));
  else if (id === 'notes') mountNotes(screen);
  else if (id === 'designs') mountDesigns(screen, go);
  else if (id === 'balance') mountBalance(screen);
  else if (id === 'pairs') mountPairs(screen);
  else if (id === 'review') mountReview(screen);
  else if (id === 'effect') mountEffect(screen);
  else if (id === 'export') mountExport(screen, go);
  saveStep(id);
  window.scrollTo(0, 0);
}

go('data');
// The remembered step needs the file again, which is never stored; the
// data step says so by asking for the file.
const lastStep = loadStep();
if (lastStep && lastStep !== 'data') saveStep('data');

const version = byTestId('core-version');
engine.ready().then(
  (info) => {
    version.textContent = `core ${info.version}`;
    version.dataset.version = info.version;
  },
  (err) => {
    version.textContent = 'core: not running';
    showError(
      err,
      'The pairsight engine could not start',
      'Reload the page. If this keeps happening, this copy of pairsight is damaged; get a fresh copy.',
    );
  },
);

const demo = () => openDemoIfAsked(engine, { openBytes: (...a) => dataScreen.openBytes(...a) }, go);
demo();
window.addEventListener('hashchange', () => {
  clearNotice();
  demo();
});
