/**
 * Walking a functional graph: every vertex u has exactly one successor succ(u) (a fixed policy's
 * graph when each state has one determining edge). From each root not yet done, the walk follows
 * successors until it meets a vertex already done or closes a new cycle. A new cycle
 * stack[c0 .. sp-1] goes to `onCycle`, which values it and marks its vertices done; then the path
 * before it is valued back to front (each vertex after its successor) by `onTail`. Howard's policy
 * evaluation (howard.ts) and the potential fit of shaping.ts both walk their graphs this way.
 */
export interface WalkBuffers {
  stamp: Int32Array;
  pos: Int32Array;
  stack: Int32Array;
}

export function walkBuffers(n: number): WalkBuffers {
  return { stamp: new Int32Array(n), pos: new Int32Array(n), stack: new Int32Array(n) };
}

export function walkFunctionalGraph(
  n: number,
  succ: (u: number) => number,
  done: Uint8Array,
  buf: WalkBuffers,
  onCycle: (stack: Int32Array, c0: number, sp: number) => void,
  onTail: (w: number) => void,
): void {
  const { stamp, pos, stack } = buf;
  stamp.fill(-1);
  for (let root = 0; root < n; root++) {
    if (done[root]) continue;
    let sp = 0;
    let u = root;
    while (!done[u] && stamp[u] !== root) {
      stamp[u] = root;
      pos[u] = sp;
      stack[sp++] = u;
      u = succ(u);
    }
    let top = sp;
    if (!done[u]) {
      onCycle(stack, pos[u], sp);
      top = pos[u];
    }
    for (let i = top - 1; i >= 0; i--) {
      onTail(stack[i]);
      done[stack[i]] = 1;
    }
  }
}
