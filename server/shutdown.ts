// Stopping the HTTP server without cutting requests in flight: stop accepting connections at once,
// let the requests already running finish within a grace period, and only then cut what is left.
import type { Server } from 'node:http';

export type ClosedServer = {
  /** Whether every request had finished by itself (false: the grace period ran out and connections were cut). */
  drained: boolean;
};

/**
 * Closes the listening socket (new connections are refused from here on), closes keep-alive connections
 * as soon as they are idle (a browser's open connection would otherwise hold the server up), and
 * resolves once every connection has ended — or, after `graceMs`, cuts the connections still open.
 */
export function closeGracefully(server: Server, graceMs: number): Promise<ClosedServer> {
  return new Promise((resolve) => {
    let drained = true;
    // A connection that finishes its response becomes idle; close it then rather than wait for the client.
    const idle = setInterval(() => server.closeIdleConnections(), 100);
    const cut = setTimeout(() => {
      drained = false;
      server.closeAllConnections();
    }, graceMs);
    server.close(() => {
      clearInterval(idle);
      clearTimeout(cut);
      resolve({ drained });
    });
    server.closeIdleConnections();
  });
}
