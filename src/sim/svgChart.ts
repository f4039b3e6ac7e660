/**
 * A small, dependency-free SVG line chart: axes with round ticks, one polyline per series, an
 * optional shaded band per series, and a legend. Output is a standalone SVG document.
 */
export interface Series {
  name: string;
  points: [number, number][];
  colour: string;
  dashed?: boolean;
  /** Optional band (e.g. p10–p90) as [x, low, high]. */
  band?: [number, number, number][];
}

export interface ChartSpec {
  title: string;
  /** Second line under the title (shortened to fit). */
  subtitle?: string;
  xLabel: string;
  yLabel: string;
  series: Series[];
  yMin?: number;
  yMax?: number;
  width?: number;
  height?: number;
}

const escape = (text: string): string => text.replace(/&/g, "&amp;").replace(/</g, "&lt;").replace(/>/g, "&gt;");

/** Round tick step (1, 2 or 5 × 10^k) giving about `count` ticks over [0, span]. */
function tickStep(span: number, count: number): number {
  const raw = span / count;
  const power = 10 ** Math.floor(Math.log10(raw));
  const m = raw / power;
  return (m <= 1 ? 1 : m <= 2 ? 2 : m <= 5 ? 5 : 10) * power;
}

function formatTick(v: number): string {
  if (Math.abs(v) >= 1e6) return `${Number((v / 1e6).toFixed(2))}M`;
  if (Math.abs(v) >= 1e3) return `${Number((v / 1e3).toFixed(1))}k`;
  return String(Number(v.toFixed(3)));
}

export function svgLineChart(spec: ChartSpec): string {
  const width = spec.width ?? 760;
  const height = spec.height ?? 420;
  const legendWidth = 190;
  const m = { left: 70, right: 20 + legendWidth, top: spec.subtitle ? 54 : 40, bottom: 50 };
  const plotW = width - m.left - m.right;
  const plotH = height - m.top - m.bottom;
  const all = spec.series.flatMap((s) => [...s.points, ...(s.band ?? []).flatMap(([x, lo, hi]) => [[x, lo], [x, hi]] as [number, number][])]);
  const xMax = Math.max(1, ...all.map((p) => p[0]));
  const yMin = spec.yMin ?? Math.min(0, ...all.map((p) => p[1]));
  const yTop = spec.yMax ?? Math.max(...all.map((p) => p[1]), yMin + 1e-9);
  const xs = (x: number): number => m.left + (x / xMax) * plotW;
  const ys = (y: number): number => m.top + plotH - ((y - yMin) / (yTop - yMin)) * plotH;
  const out: string[] = [
    `<svg xmlns="http://www.w3.org/2000/svg" width="${width}" height="${height}" viewBox="0 0 ${width} ${height}" font-family="system-ui, sans-serif" font-size="12">`,
    `<rect width="${width}" height="${height}" fill="#ffffff"/>`,
    `<text x="${m.left}" y="22" font-size="15" font-weight="600">${escape(spec.title)}</text>`,
  ];
  if (spec.subtitle) {
    const room = Math.floor((width - m.left - 10) / 6.5);
    const text = spec.subtitle.length > room ? `${spec.subtitle.slice(0, room - 1)}…` : spec.subtitle;
    out.push(`<text x="${m.left}" y="40" fill="#555">${escape(text)}</text>`);
  }
  const xStep = tickStep(xMax, 6);
  for (let x = 0; x <= xMax + 1e-9; x += xStep) {
    out.push(`<line x1="${xs(x)}" y1="${m.top}" x2="${xs(x)}" y2="${m.top + plotH}" stroke="#eeeeee"/>`);
    out.push(`<text x="${xs(x)}" y="${m.top + plotH + 16}" text-anchor="middle" fill="#444">${formatTick(x)}</text>`);
  }
  const yStep = tickStep(yTop - yMin, 5);
  for (let y = Math.ceil(yMin / yStep) * yStep; y <= yTop + 1e-9; y += yStep) {
    out.push(`<line x1="${m.left}" y1="${ys(y)}" x2="${m.left + plotW}" y2="${ys(y)}" stroke="#eeeeee"/>`);
    out.push(`<text x="${m.left - 6}" y="${ys(y) + 4}" text-anchor="end" fill="#444">${formatTick(y)}</text>`);
  }
  out.push(`<rect x="${m.left}" y="${m.top}" width="${plotW}" height="${plotH}" fill="none" stroke="#999"/>`);
  out.push(`<text x="${m.left + plotW / 2}" y="${height - 12}" text-anchor="middle">${escape(spec.xLabel)}</text>`);
  out.push(
    `<text transform="translate(16 ${m.top + plotH / 2}) rotate(-90)" text-anchor="middle">${escape(spec.yLabel)}</text>`,
  );
  for (const s of spec.series) {
    if (s.band && s.band.length > 1) {
      const upper = s.band.map(([x, , hi]) => `${xs(x).toFixed(1)},${ys(hi).toFixed(1)}`);
      const lower = s.band.map(([x, lo]) => `${xs(x).toFixed(1)},${ys(lo).toFixed(1)}`).reverse();
      out.push(`<polygon points="${[...upper, ...lower].join(" ")}" fill="${s.colour}" fill-opacity="0.15" stroke="none"/>`);
    }
    const pts = s.points.map(([x, y]) => `${xs(x).toFixed(1)},${ys(y).toFixed(1)}`).join(" ");
    out.push(
      `<polyline points="${pts}" fill="none" stroke="${s.colour}" stroke-width="2"${s.dashed ? ' stroke-dasharray="6 4"' : ""}/>`,
    );
  }
  spec.series.forEach((s, i) => {
    const y = m.top + 10 + i * 20;
    const x = width - legendWidth + 5;
    out.push(
      `<line x1="${x}" y1="${y}" x2="${x + 24}" y2="${y}" stroke="${s.colour}" stroke-width="2"${s.dashed ? ' stroke-dasharray="6 4"' : ""}/>`,
    );
    out.push(`<text x="${x + 30}" y="${y + 4}">${escape(s.name)}</text>`);
  });
  out.push("</svg>");
  return out.join("\n") + "\n";
}
