// Metro (the Expo bundler) config. In `npm run dev` the Expo dev server on 8081 forwards /api to
// the Express API (HELIODOR_API_PORT, default 8080), so the console and the API share one origin
// and the session cookie works exactly as in production.
const http = require('node:http');
const path = require('node:path');
const { getDefaultConfig } = require('expo/metro-config');

const config = getDefaultConfig(__dirname);
const apiPort = Number(process.env.HELIODOR_API_PORT || process.env.PORT || 8080);

config.server = {
  ...config.server,
  enhanceMiddleware: (metroMiddleware) => (req, res, next) => {
    if (!req.url || !req.url.startsWith('/api/')) return metroMiddleware(req, res, next);
    const upstream = http.request(
      { host: '127.0.0.1', port: apiPort, path: req.url, method: req.method, headers: req.headers },
      (answer) => {
        res.writeHead(answer.statusCode || 502, answer.headers);
        answer.pipe(res);
      },
    );
    upstream.on('error', () => {
      res.writeHead(502, { 'Content-Type': 'application/problem+json' });
      res.end(JSON.stringify({ type: 'about:blank', title: 'API not running', status: 502, detail: `Nothing answers on 127.0.0.1:${apiPort}.` }));
    });
    req.pipe(upstream);
  },
};

// On the web, zod's locale index is English alone (lib/zod-locales.js says why).
const zodLocales = path.join(__dirname, 'lib', 'zod-locales.js');
const inZod = /[\\/]node_modules[\\/]zod[\\/]/;
config.resolver.resolveRequest = (context, moduleName, platform) => {
  if (platform === 'web' && moduleName === '../locales/index.js' && inZod.test(context.originModulePath)) return { type: 'sourceFile', filePath: zodLocales };
  return context.resolveRequest(context, moduleName, platform);
};

module.exports = config;
