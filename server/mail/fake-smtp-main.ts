// Runs the mail fake on its own (used by `npm test` and `npm run dev`).
import { startFakeSmtp } from './fake-smtp';

const port = Number(process.env.HELIODOR_SMTP_PORT ?? 2525);
const outbox = process.env.HELIODOR_OUTBOX ?? '.data/outbox';
startFakeSmtp(port, outbox).then(
  () => process.stdout.write(`mail fake on 127.0.0.1:${port}\n`),
  (err) => {
    process.stderr.write(`mail fake could not start: ${err.message}\n`);
    process.exit(1);
  },
);
