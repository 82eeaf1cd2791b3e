// A running job's force history, read from its growing forces.csv piece by piece: each poll asks only for the bytes
// after the last whole line it has (an HTTP Range request), so a long run is not downloaded again and again.

import {api} from "./api.js";
import {forceColumns} from "./results.js";

export class LiveForces {
  constructor(jobId) {
    this.jobId = jobId;
    this.text = "";
    this.bytes = 0;
  }

  /** The history so far when rows were added since the last call, else null. */
  async update() {
    const {status, text} = await api.fileFrom(this.jobId, "forces.csv", this.bytes);
    if (status !== 200 && status !== 206) return null; // 404: not written yet; 416: nothing new
    if (status === 200) {
      // the whole file (the server ignored the range, or a retried run started the file again)
      this.text = "";
      this.bytes = 0;
    }
    const whole = text.slice(0, text.lastIndexOf("\n") + 1); // a line still being written waits for the next poll
    if (!whole) return null;
    this.text += whole;
    this.bytes += new TextEncoder().encode(whole).length;
    const forces = forceColumns(this.text);
    return forces.time.length ? forces : null;
  }
}
