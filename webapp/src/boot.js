// The first module of the page: starts the Python worker as soon as the bridge is loaded, before the
// screens' modules (main.js and its imports) have arrived, so the boot runs while they load. Module scripts
// run in document order, so this one (listed first in index.html) runs before main.js.
import { startWorker } from "./bridge.js";

startWorker();
