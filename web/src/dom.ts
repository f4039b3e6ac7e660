/**
 * Building DOM without markup strings. Every piece of text goes in through text nodes and every
 * attribute through setAttribute, so a value a user typed (a factor called `<img onerror=…>`) is
 * shown as the characters it is, never parsed as HTML. There is no innerHTML anywhere in the console.
 */

export type Child = Node | string | number | null | undefined | false | Child[];
type Handler = (event: Event) => void;
export type Props = Record<string, string | number | boolean | null | undefined | Handler>;

function append(parent: Node, children: Child[]): void {
  for (const child of children) {
    if (child === null || child === undefined || child === false) continue;
    if (Array.isArray(child)) append(parent, child);
    else if (child instanceof Node) parent.appendChild(child);
    else parent.appendChild(document.createTextNode(String(child)));
  }
}

function applyProps(el: Element, props: Props | null | undefined): void {
  if (!props) return;
  for (const [name, value] of Object.entries(props)) {
    if (value === null || value === undefined || value === false) continue;
    if (typeof value === "function") {
      el.addEventListener(name.replace(/^on/, "").toLowerCase(), value);
    } else if (name === "value" && "value" in el) {
      (el as HTMLInputElement).value = String(value);
    } else if (name === "checked" && el instanceof HTMLInputElement) {
      el.checked = Boolean(value);
    } else {
      el.setAttribute(name, value === true ? "" : String(value));
    }
  }
}

/** An HTML element: `h("p", {class: "note"}, "text", child)`. Event handlers are `onclick`-style props. */
export function h<K extends keyof HTMLElementTagNameMap>(
  tag: K,
  props?: Props | null,
  ...children: Child[]
): HTMLElementTagNameMap[K] {
  const el = document.createElement(tag);
  applyProps(el, props);
  append(el, children);
  return el;
}

const SVG = "http://www.w3.org/2000/svg";

/** An SVG element, for charts drawn from our own data. */
export function s(tag: string, props?: Props | null, ...children: Child[]): SVGElement {
  const el = document.createElementNS(SVG, tag) as SVGElement;
  applyProps(el, props);
  append(el, children);
  return el;
}

/** Replaces all children of `el`. */
export function replace(el: Element, ...children: Child[]): void {
  el.replaceChildren();
  append(el, children);
}

/** A value is drawn as a colour swatch only when it is plainly a CSS colour; anything else stays text. */
export function asColour(value: string | undefined): string | null {
  if (!value) return null;
  const v = value.trim();
  return /^#[0-9a-f]{3,8}$/i.test(v) || /^(rgb|hsl)a?\([\d\s.,%/]+\)$/i.test(v) ? v : null;
}

let idCounter = 0;
/** A unique id for label/aria wiring. */
export function uid(prefix: string): string {
  idCounter += 1;
  return `${prefix}-${idCounter}`;
}
