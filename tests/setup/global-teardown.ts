// Jest runs every project's global setup before the tests and every teardown after them.
export default async function globalTeardown() {
  const g = globalThis as { __heliodorSmtp?: { close(cb: () => void): void } };
  const smtp = g.__heliodorSmtp;
  if (!smtp) return;
  g.__heliodorSmtp = undefined;
  await new Promise<void>((resolve) => smtp.close(() => resolve()));
}
