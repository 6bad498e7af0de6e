import { describe, expect, it } from "vitest";
import fc from "fast-check";
import { Fifo } from "../../src/store/fifo.js";

describe("Fifo", () => {
  // Oracle: a plain JavaScript array used as a queue (push / shift / splice), which is the
  // FIFO behaviour the ring buffer must reproduce through growth and wrap-around.
  it("behaves like an array queue under any mix of push and drop", () => {
    fc.assert(
      fc.property(
        fc.array(fc.oneof(fc.record({ op: fc.constant("push" as const), n: fc.integer({ min: 1, max: 40 }) }), fc.record({ op: fc.constant("drop" as const), n: fc.integer({ min: 0, max: 40 }) })), { maxLength: 60 }),
        (ops) => {
          const q = new Fifo<number>(2);
          const model: number[] = [];
          let next = 0;
          for (const { op, n } of ops) {
            if (op === "push") {
              for (let i = 0; i < n; i++) {
                q.push(next);
                model.push(next++);
              }
            } else {
              q.dropFirst(n);
              model.splice(0, n);
            }
            expect(q.length).toBe(model.length);
            for (let i = 0; i < model.length; i++) expect(q.at(i)).toBe(model[i]);
          }
        },
      ),
    );
  });

  it("rejects an index outside the queue with the valid range", () => {
    const q = new Fifo<string>();
    q.push("VM2-TT-111");
    expect(() => q.at(1)).toThrow("expected an index in 0..0");
    q.clear();
    expect(q.length).toBe(0);
  });
});
