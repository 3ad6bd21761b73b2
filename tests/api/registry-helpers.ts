// Shared by the registry API tests: demo sign-ins and a reference decoder for label PNGs.
import jsQR from 'jsqr';
import { PNG } from 'pngjs';
import { testPassword, type TestApp } from '../helpers/app';
import { LoggerModel, Site } from '../../server/db/models';

export type DemoName = 'Morgan' | 'Priya' | 'Tomasz' | 'Ade' | 'Lena';

/** Signs in as a person of the demo scenario (PRODUCT.md: Morgan admin, Priya release engineer, Tomasz and Ade integrators, Lena support). */
export async function demoAgent(t: TestApp, name: DemoName) {
  const agent = t.agent();
  const res = await agent.post('/api/auth/sign-in').send({ email: `${name.toLowerCase()}@fernhollow.example`, password: testPassword });
  if (res.status !== 200) throw new Error(`sign-in as ${name} failed: ${res.status}`);
  return { agent, id: res.body.user.id as string };
}

/** Reference decoders: pngjs (a general-purpose PNG decoder, CRCs checked) and jsqr (a general-purpose QR decoder). */
export function decodeLabel(dataUrl: string): string {
  const prefix = 'data:image/png;base64,';
  if (!dataUrl.startsWith(prefix)) throw new Error('not a PNG data URL');
  const png = PNG.sync.read(Buffer.from(dataUrl.slice(prefix.length), 'base64'));
  const result = jsQR(new Uint8ClampedArray(png.data), png.width, png.height);
  if (!result) throw new Error('jsqr found no QR code in the label');
  return result.data;
}

export async function demoModelId(): Promise<string> {
  return (await LoggerModel.findOne({ where: { name: 'FL-2 field logger' } }))!.id;
}

export async function siteIdNamed(name: string): Promise<string> {
  return (await Site.findOne({ where: { name } }))!.id;
}

/** Every text-like value of every table, to prove a secret is stored nowhere in clear. */
export async function everyTextValue(t: TestApp): Promise<string[]> {
  const [columns] = (await t.sequelize.query(
    `SELECT table_name, column_name FROM information_schema.columns
     WHERE table_schema = 'public' AND data_type IN ('text', 'character', 'character varying', 'json', 'jsonb', 'ARRAY', 'bytea')`,
  )) as [{ table_name: string; column_name: string }[], unknown];
  const values: string[] = [];
  for (const { table_name, column_name } of columns) {
    const [rows] = (await t.sequelize.query(
      `SELECT "${column_name}"::text AS v FROM "${table_name}" WHERE "${column_name}" IS NOT NULL`,
    )) as [{ v: string }[], unknown];
    values.push(...rows.map((r) => r.v));
  }
  return values;
}
