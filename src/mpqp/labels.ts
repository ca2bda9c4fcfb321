/**
 * The label of a merged constraint row. Rows that coincide after scaling (an input limit repeated
 * at every k ≥ Nu, a state row equal to an output row) are one row of the mpQP; joining their
 * labels with "=" read like a chain of inequalities (`pump(2) <= 1 = pump(3) <= 1`). Labels of
 * the form `name(k) op bound` that differ only in k are written once with their steps
 * (`pump <= 1 at k = 2, 3, 4`; runs of four or more as `k = 2…9`); different kinds are joined with
 * " and ", since the merged row stands for each of them.
 */
const STEP_LABEL = /^(.+)\((\d+)\) (\S+) (.+)$/;

function steps(ks: number[]): string {
  const sorted = [...new Set(ks)].sort((a, b) => a - b);
  const parts: string[] = [];
  for (let i = 0; i < sorted.length; ) {
    let j = i;
    while (j + 1 < sorted.length && sorted[j + 1] === sorted[j] + 1) j++;
    if (j - i >= 3) parts.push(`${sorted[i]}…${sorted[j]}`);
    else for (let q = i; q <= j; q++) parts.push(String(sorted[q]));
    i = j + 1;
  }
  return parts.join(', ');
}

export function mergedRowLabel(labels: string[]): string {
  if (labels.length === 1) return labels[0];
  const groups = new Map<string, { head: string; ks: number[] } | null>();
  const order: string[] = [];
  for (const l of labels) {
    const m = STEP_LABEL.exec(l);
    const key = m ? `${m[1]}\u0000${m[3]}\u0000${m[4]}` : `\u0001${l}`;
    if (!groups.has(key)) {
      order.push(key);
      groups.set(key, m ? { head: `${m[1]} ${m[3]} ${m[4]}`, ks: [] } : null);
    }
    if (m) groups.get(key)!.ks.push(Number(m[2]));
  }
  return order.map((key) => {
    const g = groups.get(key);
    return g ? `${g.head} at k = ${steps(g.ks)}` : key.slice(1);
  }).join(' and ');
}
