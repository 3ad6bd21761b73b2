// `npm run admin:create -- --email <e> --name <n>`: the first admin of an empty production database.
// The password comes from HELIODOR_ADMIN_PASSWORD or a prompt (not echoed).
import readline from 'node:readline';
import { Command } from 'commander';
import { loadConfig } from '../server/config';
import { createDatabase, migrate } from '../server/db';
import { User } from '../server/db/models';
import { emailSchema, passwordSchema } from '../schemas/auth';
import { bcryptCost, hashPassword, stopPasswordWorkers } from '../server/auth/passwords';
import { recordActivity } from '../server/activity/service';
import { systemContext } from '../server/auth/actor';

function promptHidden(question: string): Promise<string> {
  return new Promise((resolve) => {
    const rl = readline.createInterface({ input: process.stdin, output: process.stdout, terminal: true });
    const out = rl as unknown as { _writeToOutput: (s: string) => void; output: NodeJS.WriteStream };
    out._writeToOutput = (s: string) => {
      if (s.includes(question)) out.output.write(s);
    };
    rl.question(question, (answer) => {
      rl.close();
      process.stdout.write('\n');
      resolve(answer);
    });
  });
}

async function main() {
  const program = new Command()
    .requiredOption('--email <email>', 'e-mail of the admin')
    .requiredOption('--name <name>', 'name shown in the console')
    .parse(process.argv);
  const opts = program.opts<{ email: string; name: string }>();
  const email = emailSchema.parse(opts.email);
  const password = process.env.HELIODOR_ADMIN_PASSWORD ?? (await promptHidden('Password (12–72 bytes): '));
  const checked = passwordSchema.safeParse(password);
  if (!checked.success) throw new Error(`password ${checked.error.issues[0].message}`);

  const config = loadConfig();
  const sequelize = createDatabase(config.databaseUrl, { poolMax: 2 });
  try {
    await migrate(sequelize);
    if ((await User.count()) > 0) throw new Error('the database already has people; add admins from the console instead');
    const passwordHash = await hashPassword(password, bcryptCost(config.production));
    await sequelize.transaction(async (transaction) => {
      const user = await User.create({ email, name: opts.name.trim(), role: 'admin', passwordHash }, { transaction });
      await recordActivity(transaction, systemContext(), { action: 'person.created', targetType: 'user', targetId: user.id, summary: `First admin ${user.name} created from the command line` });
    });
    process.stdout.write(`Admin ${email} created.\n`);
  } finally {
    await sequelize.close();
    await stopPasswordWorkers();
  }
}

main().catch((err) => {
  process.stderr.write(`admin:create: ${err instanceof Error ? err.message : String(err)}\n`);
  process.exit(1);
});
