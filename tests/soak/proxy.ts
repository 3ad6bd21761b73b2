// A TCP relay between Heliodor and PostgreSQL that can cut the line: every open connection is reset
// and the port stops listening, so new connections are refused, until it is restored on the same port.
// To the server this is the database going away (the connection lost mid-query, then refused), the
// outage of the fast soak in `npm test`, where the shared test cluster cannot be stopped.
import net from 'node:net';

export type TcpRelay = {
  port: number;
  /** Resets every relayed connection and stops listening. */
  cut(): Promise<void>;
  /** Listens again on the same port. */
  restore(): Promise<void>;
  close(): Promise<void>;
};

export async function startTcpRelay(target: { host: string; port: number }): Promise<TcpRelay> {
  const open = new Set<net.Socket>();
  const relay = (client: net.Socket) => {
    const upstream = net.connect(target);
    open.add(client);
    open.add(upstream);
    const end = () => {
      open.delete(client);
      open.delete(upstream);
      client.destroy();
      upstream.destroy();
    };
    client.on('error', end).on('close', end);
    upstream.on('error', end).on('close', end);
    client.pipe(upstream);
    upstream.pipe(client);
  };
  let server = net.createServer(relay);
  const listen = (port: number) =>
    new Promise<number>((resolve, reject) => {
      server.once('error', reject);
      server.listen(port, '127.0.0.1', () => resolve((server.address() as net.AddressInfo).port));
    });
  const port = await listen(0);
  const cut = async () => {
    await new Promise<void>((resolve) => {
      server.close(() => resolve());
      for (const s of open) s.resetAndDestroy();
      open.clear();
    });
  };
  return {
    port,
    cut,
    async restore() {
      server = net.createServer(relay);
      await listen(port);
    },
    async close() {
      if (server.listening) await cut();
    },
  };
}
