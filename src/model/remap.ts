/**
 * Carrying a page's learning across a definition change (levels or factors added or removed,
 * interaction pairs switched). A feature survives when it means the same in both designs: its
 * factor(s) and level(s) exist in both and the factors' reference (first) levels did not change;
 * the intercept survives when no surviving factor changed its reference level.
 *
 * Each site keeps its information about the surviving features. Features that disappear are
 * *marginalised out* of the site (Schur complement: Λ' = Λ_AA − Λ_AB Λ_BB⁻¹ Λ_BA,
 * η' = η_A − Λ_AB Λ_BB⁻¹ η_B; Rue & Held 2005, §2.1.5 on marginals in canonical form) rather than
 * cut as a sub-block: a removed level's traffic informed mostly its own coefficient, and cutting
 * would pretend that coefficient was zero and push its data onto the intercept. Information that
 * only the removed coefficient carried is thereby dropped. New features start with no
 * information, i.e. with their prior. Retirement counters restart.
 */
import { FacetwiseError } from "../errors.ts";
import type { Design } from "./design.ts";
import { choleskySolve, factorSpd } from "./linalg.ts";
import type { PageSettings } from "./settings.ts";
import { checkStateMatches, type ModelState, type Site } from "./state.ts";

/** Identity of each feature as a string that is equal across designs iff the meaning is equal. */
function identities(design: Design): string[] {
  const ids = ["(intercept)"];
  design.factors.forEach((factor) => factor.levels.slice(1).forEach((level) => ids.push(JSON.stringify([[factor.name, level]]))));
  design.pairs.forEach(([i, j]) => {
    for (let a = 1; a < design.sizes[i]; a++) {
      for (let b = 1; b < design.sizes[j]; b++) {
        const parts = [[design.factors[i].name, design.factors[i].levels[a]], [design.factors[j].name, design.factors[j].levels[b]]];
        parts.sort((x, y) => (x[0] < y[0] ? -1 : 1));
        ids.push(JSON.stringify(parts));
      }
    }
  });
  return ids;
}

/** For each old feature, its index in the new design or −1 when it does not survive. */
export function featureMapping(oldDesign: Design, newDesign: Design): Int32Array {
  const newRef = new Map(newDesign.factors.map((f) => [f.name, f.levels[0]]));
  const refChanged = new Set(oldDesign.factors.filter((f) => newRef.has(f.name) && newRef.get(f.name) !== f.levels[0]).map((f) => f.name));
  const newIndex = new Map(identities(newDesign).map((id, i) => [id, i]));
  return Int32Array.from(identities(oldDesign), (id, i) => {
    if (i === 0) return refChanged.size === 0 ? 0 : -1;
    const parts = JSON.parse(id) as [string, string][];
    if (parts.some(([factor]) => refChanged.has(factor))) return -1;
    return newIndex.get(id) ?? -1;
  });
}

function remapSite(site: Site, mapping: Int32Array, d: number, dNew: number): Site {
  const keep: number[] = [];
  const drop: number[] = [];
  let maxDiag = 0;
  for (let i = 0; i < d; i++) maxDiag = Math.max(maxDiag, site.lambda[i * d + i]);
  for (let i = 0; i < d; i++) {
    if (mapping[i] >= 0) keep.push(i);
    else if (site.lambda[i * d + i] > 1e-12 * maxDiag) drop.push(i); // features without information need no marginalising
  }
  const a = keep.length;
  const lam = new Float64Array(a * a);
  const eta = new Float64Array(a);
  keep.forEach((i, r) => {
    eta[r] = site.eta[i];
    keep.forEach((j, c) => (lam[r * a + c] = site.lambda[i * d + j]));
  });
  const b = drop.length;
  const chol = b > 0 && a > 0 ? informationFactor(site, drop, d) : null;
  if (chol) {
    // X = Λ_BB⁻¹ Λ_BA (b × a, solved column by column) and y = Λ_BB⁻¹ η_B.
    const x = new Float64Array(b * a);
    for (let c = 0; c < a; c++) {
      const col = Float64Array.from(drop, (i) => site.lambda[i * d + keep[c]]);
      const solved = choleskySolve(chol, b, col);
      for (let r = 0; r < b; r++) x[r * a + c] = solved[r];
    }
    const y = choleskySolve(chol, b, Float64Array.from(drop, (i) => site.eta[i]));
    for (let r = 0; r < a; r++) {
      const i = keep[r];
      for (let c = 0; c < a; c++) {
        let acc = 0;
        for (let q = 0; q < b; q++) acc += site.lambda[i * d + drop[q]] * x[q * a + c];
        lam[r * a + c] -= acc;
      }
      let acc = 0;
      for (let q = 0; q < b; q++) acc += site.lambda[i * d + drop[q]] * y[q];
      eta[r] -= acc;
    }
  }
  const out: Site = { lambda: new Float64Array(dNew * dNew), eta: new Float64Array(dNew), visitors: site.visitors, conversions: site.conversions, folds: site.folds };
  keep.forEach((i, r) => {
    const ni = mapping[i];
    out.eta[ni] = eta[r];
    keep.forEach((j, c) => (out.lambda[ni * dNew + mapping[j]] = 0.5 * (lam[r * a + c] + lam[c * a + r])));
  });
  return out;
}

/**
 * Cholesky factor of the dropped features' block Λ_BB, or null when that block carries too little
 * information to factor even after factorSpd's repair (features seen in a handful of visits):
 * then the features are cut rather than marginalised — what little they said is lost, but a page
 * edit never fails on it.
 */
function informationFactor(site: Site, drop: number[], d: number): Float64Array | null {
  const b = drop.length;
  const lbb = new Float64Array(b * b);
  drop.forEach((i, r) => drop.forEach((j, c) => (lbb[r * b + c] = site.lambda[i * d + j])));
  try {
    return factorSpd(lbb, b, "remapping a segment's information");
  } catch (error) {
    if (error instanceof FacetwiseError && error.code === "NUMERICAL_FAILURE") return null;
    throw error;
  }
}

export function remapState(state: ModelState, oldDesign: Design, newDesign: Design, _settings?: PageSettings): ModelState {
  checkStateMatches(state, oldDesign);
  const mapping = featureMapping(oldDesign, newDesign);
  const sites = new Map<string, Site>();
  for (const [segment, site] of state.sites) sites.set(segment, remapSite(site, mapping, oldDesign.dimension, newDesign.dimension));
  return { version: 1, featureNames: newDesign.featureNames.slice(), lastFoldAt: state.lastFoldAt, sites, dominated: new Map(), segmentSpread: state.segmentSpread };
}
