// Expo's Babel preset for the app and for jest-expo (see STACK.md, pitfall 7).
module.exports = function (api) {
  api.cache(true);
  return { presets: ['babel-preset-expo'] };
};
