// A first-in first-out queue on a growable ring buffer. push, shift and dropFirst are O(1)
// (push amortised): the historian's append path runs once per sample and must not copy arrays.

export class Fifo<T> {
  private buf: (T | undefined)[];
  private head = 0;
  private count = 0;

  constructor(initialCapacity = 1024) {
    let cap = 1;
    while (cap < initialCapacity) cap *= 2;
    this.buf = Array.from<T | undefined>({ length: cap });
  }

  get length(): number {
    return this.count;
  }

  push(item: T): void {
    if (this.count === this.buf.length) this.grow();
    this.buf[(this.head + this.count) & (this.buf.length - 1)] = item;
    this.count++;
  }

  /** The i-th oldest item (0 = oldest). */
  at(i: number): T {
    if (i < 0 || i >= this.count) throw new RangeError(`Fifo.at(${i}): expected an index in 0..${this.count - 1}`);
    return this.buf[(this.head + i) & (this.buf.length - 1)] as T;
  }

  /** Removes the n oldest items. */
  dropFirst(n: number): void {
    const k = Math.min(n, this.count);
    const mask = this.buf.length - 1;
    // Clear the slots so the dropped objects can be collected.
    for (let i = 0; i < k; i++) this.buf[(this.head + i) & mask] = undefined;
    this.head = (this.head + k) & mask;
    this.count -= k;
  }

  clear(): void {
    this.buf = Array.from<T | undefined>({ length: this.buf.length });
    this.head = 0;
    this.count = 0;
  }

  private grow(): void {
    const old = this.buf;
    const mask = old.length - 1;
    const next = Array.from<T | undefined>({ length: old.length * 2 });
    for (let i = 0; i < this.count; i++) next[i] = old[(this.head + i) & mask];
    this.buf = next;
    this.head = 0;
  }
}
