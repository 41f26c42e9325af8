/** Escapes text for HTML and SVG element content and attribute values. */
export function esc(s: string): string {
  return s.replace(/[&<>"']/g, (c) => ESCAPES[c]!);
}
const ESCAPES: Record<string, string> = { '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' };

/** A coordinate with at most one decimal: the page stays small and pixels are finer than that anyway. */
export function px(x: number): string {
  return String(Math.round(x * 10) / 10);
}

/**
 * Polyline point lists for a series with gaps: each run of finite values becomes one list, so a missing
 * window breaks the line instead of bridging it.
 */
export function runs(xs: ArrayLike<number>, ys: ArrayLike<number>): string[] {
  const out: string[] = [];
  let cur: string[] = [];
  for (let i = 0; i < ys.length; i++) {
    const y = ys[i]!;
    if (Number.isFinite(y)) cur.push(`${px(xs[i]!)},${px(y)}`);
    else if (cur.length > 0) { out.push(cur.join(' ')); cur = []; }
  }
  if (cur.length > 0) out.push(cur.join(' '));
  return out;
}
