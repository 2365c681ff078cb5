// Start-up: the engine (a worker with the wasm core), the step rail, the
// data screen, and the demo hook.

import { byTestId } from './dom.js';
import { locateCore, startEngine } from './engine.js';
import { showError } from './banner.js';
import { mountRail } from './rail.js';
import { mountData } from './screens/data.js';
import { openDemoIfAsked } from './demo.js';

const engine = startEngine(locateCore(document));
mountRail(byTestId('step-rail'), 'data');
const dataScreen = mountData(byTestId('screen'), engine);

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

openDemoIfAsked(engine, dataScreen);
window.addEventListener('hashchange', () => openDemoIfAsked(engine, dataScreen));
