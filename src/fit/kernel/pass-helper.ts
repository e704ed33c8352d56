// Helper thread of pass-team.ts: holds the current fit's arrays (shared
// memory) and runs the second half of each pass it is sent, waking on the
// shared flag and answering on its port.
import { type MessagePort, receiveMessageOnPort, workerData } from "node:worker_threads";
import { collectGarbage } from "../../math/collect.js";
import { type PassContext, type PassMessage, runPass } from "./pass-range.js";

const { port, ctl } = workerData as { port: MessagePort; ctl: Int32Array };
type Message =
  | { type: "context"; context: PassContext }
  | { type: "drop" }
  | { type: "pass"; seq: number; pass: PassMessage };

let context: PassContext | null = null;
let seen = 0;
Atomics.store(ctl, 2, 1);
Atomics.notify(ctl, 2);
for (;;) {
  Atomics.wait(ctl, 0, seen);
  seen = Atomics.load(ctl, 0);
  for (let r = receiveMessageOnPort(port); r; r = receiveMessageOnPort(port)) {
    const m = r.message as Message;
    if (m.type === "context") context = m.context;
    else if (m.type === "drop") {
      // This thread never returns to its event loop, where V8's own collections run as tasks: without
      // this, the shared arrays of every fit it was sent would stay mapped until the process exits.
      context = null;
      collectGarbage();
    } else {
      try {
        if (context === null) throw new Error("no context");
        port.postMessage(runPass(context, m.pass));
      } catch (e) {
        port.postMessage({ error: String(e) });
      }
      Atomics.store(ctl, 1, m.seq);
      Atomics.notify(ctl, 1);
    }
  }
}
