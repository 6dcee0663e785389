/**
 * Fill-reducing ordering and symbolic Cholesky factorisation of a symmetric sparsity graph.
 *
 * Method: minimum-degree ordering on the explicit elimination graph (Tinney scheme 2; Rose 1972; George & Liu,
 * "The evolution of the minimum degree ordering algorithm", SIAM Review 31(1), 1989). Eliminating a node joins its
 * neighbours into a clique, and that neighbour set at elimination time is exactly the row structure of the
 * corresponding column of L, so the symbolic factorisation falls out of the ordering for free.
 * Ties are broken by the lowest node index, so the ordering is deterministic.
 */

export interface SymbolicCholesky {
  /** Number of nodes (block columns). */
  n: number;
  /** perm[k] = original node eliminated k-th. */
  perm: Int32Array;
  /** iperm[node] = elimination position of the original node. */
  iperm: Int32Array;
  /** Column k of L (permuted numbering) has below-diagonal rows rowIdx[colStart[k] .. colStart[k+1]), ascending. */
  colStart: Int32Array;
  rowIdx: Int32Array;
}

/** Binary min-heap of (key, node) packed into two growable arrays; ties broken by node index. */
class MinHeap {
  private keys: number[] = [];
  private nodes: number[] = [];
  get size(): number {
    return this.keys.length;
  }
  push(key: number, node: number): void {
    const k = this.keys, v = this.nodes;
    let i = k.length;
    k.push(key);
    v.push(node);
    while (i > 0) {
      const p = (i - 1) >> 1;
      if (k[p]! < key || (k[p] === key && v[p]! <= node)) break;
      k[i] = k[p]!;
      v[i] = v[p]!;
      i = p;
    }
    k[i] = key;
    v[i] = node;
  }
  /** Removes the minimum; returns its node and leaves its key in `lastKey`. */
  lastKey = 0;
  pop(): number {
    const k = this.keys, v = this.nodes;
    const topNode = v[0]!;
    this.lastKey = k[0]!;
    const key = k.pop()!;
    const node = v.pop()!;
    const n = k.length;
    if (n > 0) {
      let i = 0;
      for (;;) {
        const l = 2 * i + 1;
        if (l >= n) break;
        const r = l + 1;
        let c = l;
        if (r < n && (k[r]! < k[l]! || (k[r] === k[l] && v[r]! < v[l]!))) c = r;
        if (key < k[c]! || (key === k[c] && node <= v[c]!)) break;
        k[i] = k[c]!;
        v[i] = v[c]!;
        i = c;
      }
      k[i] = key;
      v[i] = node;
    }
    return topNode;
  }
}

/**
 * Orders the nodes of an undirected graph (edges as flat pairs [a0, b0, a1, b1, ...]; self-pairs and duplicates
 * are ignored) by minimum degree and returns the symbolic structure of the Cholesky factor in that order.
 */
export function minimumDegreeSymbolic(n: number, pairs: ArrayLike<number>): SymbolicCholesky {
  if (pairs.length % 2 !== 0) throw new RangeError('pairs must hold an even number of indices');
  const adj: Set<number>[] = new Array(n);
  for (let i = 0; i < n; i++) adj[i] = new Set<number>();
  for (let e = 0; e < pairs.length; e += 2) {
    const a = pairs[e]!, b = pairs[e + 1]!;
    if (a < 0 || b < 0 || a >= n || b >= n) throw new RangeError(`pair (${a}, ${b}) out of range for n = ${n}`);
    if (a === b) continue;
    adj[a]!.add(b);
    adj[b]!.add(a);
  }
  const heap = new MinHeap();
  for (let i = 0; i < n; i++) heap.push(adj[i]!.size, i);
  const perm = new Int32Array(n);
  const iperm = new Int32Array(n).fill(-1);
  const colNodes: Int32Array[] = new Array(n);
  let k = 0;
  while (heap.size > 0) {
    const v = heap.pop();
    if (iperm[v]! >= 0 || heap.lastKey !== adj[v]!.size) continue; // stale heap entry
    if (adj[v]!.size === n - k - 1 && n - k > 2) {
      // The least degree is every other remaining node: the rest is a clique. Eliminating it node by node would
      // order it by index (all degrees tie) and fill nothing, so take that order at once instead of paying for the
      // clique updates (on the 8-hour Shift graph: a 262-node clique, 40 % of the ordering time).
      const rest: number[] = [];
      for (let u = 0; u < n; u++) if (iperm[u]! < 0) rest.push(u);
      for (let a = 0; a < rest.length; a++) {
        perm[k] = rest[a]!;
        iperm[rest[a]!] = k;
        colNodes[k] = Int32Array.from(rest.slice(a + 1));
        k++;
      }
      break;
    }
    perm[k] = v;
    iperm[v] = k;
    const nbrs = Int32Array.from(adj[v]!);
    colNodes[k] = nbrs;
    k++;
    for (let a = 0; a < nbrs.length; a++) {
      const u = nbrs[a]!;
      const su = adj[u]!;
      su.delete(v);
      for (let b = 0; b < nbrs.length; b++) if (b !== a) su.add(nbrs[b]!);
      heap.push(su.size, u);
    }
    adj[v]!.clear();
  }
  const colStart = new Int32Array(n + 1);
  for (let c = 0; c < n; c++) colStart[c + 1] = colStart[c]! + colNodes[c]!.length;
  const rowIdx = new Int32Array(colStart[n]!);
  for (let c = 0; c < n; c++) {
    const nodes = colNodes[c]!;
    const base = colStart[c]!;
    for (let a = 0; a < nodes.length; a++) rowIdx[base + a] = iperm[nodes[a]!]!;
    rowIdx.subarray(base, base + nodes.length).sort();
  }
  return { n, perm, iperm, colStart, rowIdx };
}
