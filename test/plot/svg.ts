/**
 * Small readers of the SVG text that vega writes, written for these tests
 * independently of the plotting code: a tag-balance check, mark groups, path
 * points, fills and the axes' tick positions.
 */

/** Checks that tags nest and close, attribute values are quoted and text holds no raw `<` or stray `&`. Returns problems found. */
export function xmlProblems(svg: string): string[] {
  const problems: string[] = [];
  const stack: string[] = [];
  const tag = /<(\/?)([A-Za-z][\w:.-]*)((?:\s+[\w:.-]+="[^"<]*")*)\s*(\/?)>/y;
  let i = 0;
  while (i < svg.length) {
    const lt = svg.indexOf("<", i);
    const text = svg.slice(i, lt === -1 ? svg.length : lt);
    if (/&(?!(amp|lt|gt|quot|apos|#\d+|#x[0-9a-fA-F]+);)/.test(text)) problems.push(`stray & in text near ${i}`);
    if (lt === -1) break;
    tag.lastIndex = lt;
    const m = tag.exec(svg);
    if (m === null) {
      problems.push(`malformed tag at ${lt}: ${svg.slice(lt, lt + 40)}`);
      break;
    }
    const [, closing, name, , selfClosing] = m;
    if (closing) {
      const open = stack.pop();
      if (open !== name) problems.push(`</${name}> closes <${open}>`);
    } else if (!selfClosing) stack.push(name!);
    i = tag.lastIndex;
  }
  if (stack.length > 0) problems.push(`unclosed: ${stack.join(", ")}`);
  return problems;
}

/** The inner text of every `<g class="<cls>...">` group (groups of mark items are flat, holding no nested `<g>`). */
export function flatGroups(svg: string, cls: string): string[] {
  const re = new RegExp(`<g class="${cls}[^"]*"[^>]*>((?:(?!<g[ >]).)*?)</g>`, "gs");
  return [...svg.matchAll(re)].map((m) => m[1]!);
}

/** Self-closing `<path .../>` elements of a text, as attribute maps. */
export function paths(text: string): Record<string, string>[] {
  return [...text.matchAll(/<path\s([^>]*?)\/>/g)].map((m) => Object.fromEntries([...m[1]!.matchAll(/([\w:-]+)="([^"]*)"/g)].map((a) => [a[1]!, a[2]!])));
}

/** Points of a path made of M/L commands (vega's linear lines and areas). */
export function points(d: string): [number, number][] {
  return [...d.matchAll(/[ML]\s*(-?[\d.e+-]+)[ ,](-?[\d.e+-]+)/g)].map((m) => [Number(m[1]), Number(m[2])]);
}

/** Marks of a kind by their accessibility description, e.g. "line mark", "area mark". */
export function marks(svg: string, kind: string): Record<string, string>[] {
  return paths(svg).filter((p) => p["aria-roledescription"] === kind);
}

/** Field values of a mark from its aria-label (`field: value; field: value`). */
export function ariaFields(label: string): Record<string, string> {
  return Object.fromEntries(label.split("; ").map((kv) => kv.split(": ") as [string, string]));
}

/** Rectangle cells `M x,y h w v h h -w Z` of a group, with their fill. */
export function cells(group: string): { x: number; y: number; w: number; h: number; fill: string }[] {
  return paths(group).map((p) => {
    const m = /^M(-?[\d.]+),(-?[\d.]+)h(-?[\d.]+)v(-?[\d.]+)h/.exec(p.d ?? "");
    if (m === null) throw new Error(`not a rectangle: ${p.d}`);
    return { x: Number(m[1]), y: Number(m[2]), w: Number(m[3]), h: Number(m[4]), fill: p.fill ?? "" };
  });
}

/**
 * A pixel map read off an axis: the labelled ticks of the axis whose
 * aria-label starts with `X-axis` or `Y-axis`, fitted by least squares
 * (pixel = a + b * t(value), t = identity or log10). Vega draws axis groups
 * displaced by half a pixel for crisp lines (its axis `translate` setting);
 * the tick positions inside the group are the scale's own values.
 */
export function axisMap(svg: string, axis: "X" | "Y", log = false): { toPixel: (v: number) => number; ticks: number[] } {
  const start = svg.indexOf(`aria-label="${axis}-axis`);
  if (start < 0) throw new Error(`no ${axis} axis`);
  const part = svg.slice(start, svg.indexOf("role-axis-domain", start));
  const tickGroup = flatGroups(part, "mark-rule role-axis-tick")[0]!;
  const labelGroup = flatGroups(part, "mark-text role-axis-label")[0]!;
  const tickPos = [...tickGroup.matchAll(/translate\((-?[\d.]+),(-?[\d.]+)\)/g)].map((m) => Number(axis === "X" ? m[1] : m[2]));
  const labels = [...labelGroup.matchAll(/<text[^>]*?(?:\/>|>([^<]*)<\/text>)/g)].map((m) => m[1]);
  if (labels.length !== tickPos.length) throw new Error("ticks and labels differ in number");
  const t = (v: number) => (log ? Math.log10(v) : v);
  const xs: number[] = [];
  const ys: number[] = [];
  const ticks: number[] = [];
  labels.forEach((l, i) => {
    if (l === undefined || l === "") return;
    const v = Number(l.replace("\u2212", "-").replace(/,/g, ""));
    ticks.push(v);
    xs.push(t(v));
    ys.push(tickPos[i]!);
  });
  const n = xs.length;
  const mx = xs.reduce((a, b) => a + b, 0) / n;
  const my = ys.reduce((a, b) => a + b, 0) / n;
  let sxy = 0;
  let sxx = 0;
  for (let i = 0; i < n; i++) {
    sxy += (xs[i]! - mx) * (ys[i]! - my);
    sxx += (xs[i]! - mx) ** 2;
  }
  const b = sxy / sxx;
  return { toPixel: (v) => my + b * (t(v) - mx), ticks };
}

/** Asserts that two pixel positions agree within `tol` pixels (absolute), printing both on failure. */
export function expectPixel(actual: number | undefined, expected: number, tol: number, label: string): void {
  const ok = actual !== undefined && Math.abs(actual - expected) <= tol;
  if (!ok) throw new Error(`${label}: pixel ${actual} expected ${expected} (tolerance ${tol} px)`);
}
