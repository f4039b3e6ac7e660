/**
 * The demo page's hero images, drawn here as small SVGs of our own (no photographs to license):
 * a mechanic at a stand, a wheel being trued, a commuter in the rain. Served at /demo/<name>.svg.
 */

const frame = (label: string, sky: string, body: string) =>
  `<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 640 360" width="640" height="360" role="img" aria-label="${label}">` +
  `<rect width="640" height="360" fill="${sky}"/><rect y="290" width="640" height="70" fill="#3d4a3d"/>${body}</svg>`;

const wheel = (cx: number, cy: number, r: number, stroke: string) =>
  `<circle cx="${cx}" cy="${cy}" r="${r}" fill="none" stroke="${stroke}" stroke-width="8"/>` +
  Array.from({ length: 12 }, (_, i) => {
    const a = (i * Math.PI) / 6;
    return `<line x1="${cx}" y1="${cy}" x2="${(cx + r * Math.cos(a)).toFixed(1)}" y2="${(cy + r * Math.sin(a)).toFixed(1)}" stroke="${stroke}" stroke-width="2"/>`;
  }).join("");

export const demoImages: Record<string, string> = {
  "hero-mechanic": frame("A mechanic adjusting a bike on a repair stand", "#f3e3c3",
    `<rect x="300" y="120" width="12" height="170" fill="#555"/>${wheel(220, 240, 50, "#222")}${wheel(400, 240, 50, "#222")}` +
    `<path d="M220 240 L300 170 L400 240 M300 170 L360 170" stroke="#c0392b" stroke-width="10" fill="none"/>` +
    `<circle cx="500" cy="130" r="28" fill="#8d5524"/><rect x="475" y="160" width="50" height="110" rx="14" fill="#1f5f8b"/>`),
  "hero-wheel-truing": frame("A wheel being trued in a truing stand", "#dde8f0",
    `<rect x="200" y="60" width="16" height="240" fill="#777"/><rect x="424" y="60" width="16" height="240" fill="#777"/>${wheel(320, 180, 110, "#333")}` +
    `<circle cx="320" cy="180" r="14" fill="#999"/>`),
  "hero-rainy-commuter": frame("A commuter riding through the rain", "#7f8c99",
    Array.from({ length: 40 }, (_, i) => `<line x1="${(i * 53) % 640}" y1="${(i * 37) % 260}" x2="${((i * 53) % 640) - 8}" y2="${((i * 37) % 260) + 24}" stroke="#cfd8e0" stroke-width="2"/>`).join("") +
    `${wheel(240, 250, 45, "#111")}${wheel(400, 250, 45, "#111")}<path d="M240 250 L310 190 L400 250 M310 190 L370 190" stroke="#f1c40f" stroke-width="9" fill="none"/>` +
    `<circle cx="330" cy="120" r="22" fill="#f1c40f"/><rect x="310" y="140" width="40" height="55" rx="10" fill="#f1c40f"/>`),
};
