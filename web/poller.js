// Polling with back-off: fast while things change, slower while they don't, stopped when nothing
// runs or the tab is hidden. `tick` returns {active, changed}.

export class Poller {
  constructor(tick, {min = 1000, max = 15000, factor = 1.6, onState} = {}) {
    this.tick = tick;
    this.min = min;
    this.max = max;
    this.factor = factor;
    this.onState = onState ?? (() => {});
    this.delay = min;
    this.timer = null;
    this.running = false; // a tick is in flight
    this.stopped = true;
    this.visibility = () => {
      if (document.hidden) this.pause();
      else if (!this.stopped) this.kick();
    };
    document.addEventListener("visibilitychange", this.visibility);
  }

  /** Poll now and keep going while something is active. */
  kick() {
    this.stopped = false;
    this.delay = this.min;
    clearTimeout(this.timer);
    this.timer = null;
    this.run();
  }

  pause() {
    clearTimeout(this.timer);
    this.timer = null;
    this.onState("paused");
  }

  stop() {
    this.stopped = true;
    clearTimeout(this.timer);
    this.timer = null;
    this.onState("idle");
  }

  dispose() {
    this.stop();
    document.removeEventListener("visibilitychange", this.visibility);
  }

  async run() {
    if (this.running) return;
    this.running = true;
    let result = {active: false, changed: false};
    try {
      result = await this.tick();
    } catch {
      result = {active: true, changed: false}; // keep trying, slowly
      this.delay = Math.max(this.delay, this.max / 2);
    } finally {
      this.running = false;
    }
    if (this.stopped) return;
    if (!result.active) {
      this.stop();
      return;
    }
    this.delay = result.changed ? this.min : Math.min(this.delay * this.factor, this.max);
    if (document.hidden) {
      this.pause();
      return;
    }
    this.onState("live", this.delay);
    this.timer = setTimeout(() => this.run(), this.delay);
  }
}
