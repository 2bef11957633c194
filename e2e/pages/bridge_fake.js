// Test page of the e2e suite: replaces the global Worker by a scripted stand-in
// before the bridge is imported, and exposes both as window.bridgeTest. The
// stand-in records every message the bridge posts and answers only when the
// test tells it to.

class StandInWorker extends EventTarget {
  constructor(url, options) {
    super();
    this.url = String(url);
    this.options = options;
    this.received = [];
    StandInWorker.last = this;
  }

  postMessage(msg) {
    this.received.push(msg);
  }

  emit(data) {
    this.dispatchEvent(new MessageEvent("message", { data }));
  }

  ready() {
    this.emit({ type: "status", stage: "ready", detail: "stand-in", progress: 1, ready: true, error: null });
  }

  // Answer the oldest request not answered yet with a response echoing its id.
  answerNext() {
    const msg = this.received[this.answered = (this.answered || 0)];
    this.answered += 1;
    const id = JSON.parse(msg.json).id;
    this.emit({ type: "response", n: msg.n, json: JSON.stringify({ schema: 1, id, ok: true, result: {} }) });
  }
}

self.Worker = StandInWorker;
const bridge = await import("/src/bridge.js");
window.bridgeTest = { bridge, worker: () => StandInWorker.last };
