/** The ES-module form (/client/v1.mjs): `import { start } from ".../client/v1.mjs"`; nothing starts by itself. */
export { start, render, contextOf, referrerClass, deviceClass } from "./core.js";
