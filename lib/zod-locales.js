// zod's locale index as the web app sees it (metro.config.js points zod's own `../locales/index.js` here):
// English alone. zod carries every language's error messages behind `z.locales`, about 270 KB of the
// first download before sign-in; the console writes its own messages in English and never switches zod's
// locale, and zod registers English as its default from `locales/en.js` directly.
export { default as en } from 'zod/v4/locales/en.js';
