// New labels for a batch in the browser: from a logger's page, an admin confirms (the dialog says the
// old labels stop working) and gets the batch's new label sheet and bench sheet once; the old tokens are
// then unknown. Rule: docs/PRODUCT.md journey 1.
import { testPassword, csrf } from '../helpers/app';
import { browserApp, screenshot, signIn, viewports } from '../helpers/browser';
import { findLoggerByToken } from '../../server/loggers/tokens';

const session = browserApp({ seed: 'demo' });

test('when an admin issues new labels for a batch from a logger\'s page, then the confirmation warns, the new sheet shows the waiting loggers, and the old labels stop working', async () => {
  const { t, base, browser } = session;
  const admin = await t.signedIn('admin', 'Batch Admin');
  const csv = 'serial,model,board\nFL2-LB001,FL-2 field logger,A\nFL2-LB002,FL-2 field logger,B\nFL2-LB003,FL-2 field logger,C\n';
  const registered = await admin.post('/api/loggers/batch').set(csrf).attach('file', Buffer.from(csv), { filename: 'bench-june.csv', contentType: 'text/csv' });
  expect(registered.status).toBe(201);
  const rows = registered.body.rows as { id: string; token: string }[];

  const context = await browser.newContext({ viewport: viewports.phone });
  const page = await context.newPage();
  const errors: string[] = [];
  page.on('pageerror', (e) => errors.push(e.message));
  await signIn(page, base, 'morgan@fernhollow.example', testPassword);
  await page.getByRole('heading', { name: 'Overview' }).waitFor();
  await page.goto(`${base}/loggers/${rows[1].id}`);
  await page.getByText('Batch bench-june.csv').waitFor();
  await page.getByText('3 still wait for enrollment.', { exact: false }).waitFor();
  await page.getByTestId('batch-labels').click();
  await page.getByText('Their old labels and bench sheet rows stop working at once', { exact: false }).waitFor();
  await screenshot(page, 'batch-labels-confirm-phone');
  await page.getByTestId('confirm').click();
  await page.getByTestId('token-sheet').waitFor();
  await page.getByText('New labels for the batch bench-june.csv').waitFor();
  await screenshot(page, 'batch-labels-sheet-phone');
  for (const row of rows) expect(await findLoggerByToken(row.token)).toBeNull();
  expect(errors).toEqual([]);
  await context.close();
});
