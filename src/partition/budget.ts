/**
 * Work list of the tree builders under a memory budget: pending nodes come out largest first (by
 * the rows their regions hold), so that when the budget runs out the leaves left unsplit are the
 * cheapest ones. A plain binary max-heap; ties leave in insertion order.
 */
export class LargestFirst<T> {
  private items: { key: number; seq: number; value: T }[] = [];
  private seq = 0;

  get size(): number {
    return this.items.length;
  }

  push(key: number, value: T): void {
    const h = this.items;
    h.push({ key, seq: this.seq++, value });
    let i = h.length - 1;
    while (i > 0) {
      const p = (i - 1) >> 1;
      if (!this.before(h[i], h[p])) break;
      [h[i], h[p]] = [h[p], h[i]];
      i = p;
    }
  }

  pop(): T {
    const h = this.items;
    const top = h[0];
    const last = h.pop()!;
    if (h.length > 0) {
      h[0] = last;
      let i = 0;
      for (;;) {
        const l = 2 * i + 1;
        const r = l + 1;
        let m = i;
        if (l < h.length && this.before(h[l], h[m])) m = l;
        if (r < h.length && this.before(h[r], h[m])) m = r;
        if (m === i) break;
        [h[i], h[m]] = [h[m], h[i]];
        i = m;
      }
    }
    return top.value;
  }

  private before(a: { key: number; seq: number }, b: { key: number; seq: number }): boolean {
    return a.key > b.key || (a.key === b.key && a.seq < b.seq);
  }
}

/**
 * Conservative bytes of a tree's location arrays as the C target lays them out in float (the
 * builder's budget check; the cost report gives the exact figure): per node `nodeBytes`, per leaf a
 * 4-byte start offset, per listed region 2 bytes (4 above 65 535 regions).
 */
export function locatorBytes(nodes: number, nodeBytes: number, leaves: number, copies: number, regions: number): number {
  return nodes * nodeBytes + (leaves + 1) * 4 + copies * (regions > 65535 ? 4 : 2);
}
