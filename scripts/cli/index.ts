// `heliodor`: the release engineer's offline signing tool (`npm run -s heliodor -- <command>`, or the
// package's `heliodor` bin). Wiring only: the commands live in ./commands.ts.
import { writeFile } from 'node:fs/promises';
import { Command, Option } from 'commander';
import { signatureAlgorithms } from '../../schemas/manifest';
import { ManifestError } from '../../server/images/manifest';
import { readFile } from 'node:fs/promises';
import { addReleaseSignature, CliError, newSigningKey, pushRelease, signManifestFile, signTrustSetFile, verifySignedManifest, writeManifest } from './commands';

/** All of standard input (a signature piped from `heliodor sign`). */
async function stdinText(): Promise<string> {
  if (process.stdin.isTTY) return '';
  const chunks: Buffer[] = [];
  for await (const chunk of process.stdin) chunks.push(chunk as Buffer);
  return Buffer.concat(chunks).toString('utf8');
}

/** One line on stderr and exit status 1; never a stack trace, never key material. */
function fail(error: unknown): void {
  const known = error instanceof CliError || error instanceof ManifestError;
  const message = error instanceof Error ? error.message : String(error);
  process.stderr.write(`heliodor: ${known ? '' : 'unexpected error: '}${message.replace(/\s*\n\s*/g, ' ')}\n`);
  process.exitCode = 1;
}

/** Writes command output to --out (exact bytes) or stdout. */
async function emit(text: string, out: string | undefined, newlineOnTerminal = false): Promise<void> {
  if (out) {
    await writeFile(out, text).catch((error: Error) => {
      throw new CliError(`cannot write ${out}: ${error.message}`);
    });
    return;
  }
  // The manifest's bytes are what gets signed, so a newline is added only for a person reading a terminal.
  process.stdout.write(newlineOnTerminal && process.stdout.isTTY ? `${text}\n` : text);
}

function buildProgram(): Command {
  const program = new Command('heliodor')
    .description('Heliodor signing tool: signing keys, image manifests and signatures made offline, and release uploads')
    .showHelpAfterError('(run with --help for usage)');

  const keys = program.command('keys').description('signing keys');
  keys
    .command('new')
    .description('make a signing key pair: <name>.private.pem (PKCS#8, mode 0600) and <name>.public.pem (SPKI)')
    .addOption(new Option('--algorithm <algorithm>', 'signature algorithm').choices(signatureAlgorithms).makeOptionMandatory())
    .requiredOption('--out <dir>', 'directory for the key files (created if missing)')
    .option('--name <base>', 'file name base', 'signing-key')
    .action(async (options: { algorithm: (typeof signatureAlgorithms)[number]; out: string; name: string }) => {
      try {
        process.stdout.write((await newSigningKey(options)).report);
      } catch (error) {
        fail(error);
      }
    });

  program
    .command('manifest')
    .description('print the RFC 8785 canonical manifest of an image (redirect it to manifest.json, or use --out)')
    .requiredOption('--image <file>', 'the firmware image')
    .requiredOption('--model <id>', "the model's id (lowercase UUID, as shown in Heliodor)")
    .requiredOption('--version <version>', 'semantic version, e.g. 2.4.0')
    .requiredOption('--boards <labels>', 'board revisions the image runs on, comma-separated, e.g. B,C')
    .requiredOption('--counter <n>', 'security counter (loggers refuse images with a lower one)')
    .option('--issued-at <time>', 'RFC 3339 UTC time (default: now)')
    .option('--out <file>', 'write the manifest to this file instead of stdout')
    .action(async (options: { image: string; model: string; version: string; boards: string; counter: string; issuedAt?: string; out?: string }) => {
      try {
        await emit(await writeManifest(options), options.out, true);
      } catch (error) {
        fail(error);
      }
    });

  program
    .command('sign')
    .description('print the base64 signature of a canonical manifest')
    .requiredOption('--key <file>', 'the private key (.private.pem)')
    .option('--out <file>', 'write the signature to this file instead of stdout')
    .argument('<manifest>', 'the manifest file')
    .action(async (manifest: string, options: { key: string; out?: string }) => {
      try {
        await emit(await signManifestFile({ key: options.key, manifest }), options.out);
      } catch (error) {
        fail(error);
      }
    });

  program
    .command('verify')
    .description('check a manifest is canonical and signed by a key, and optionally that an image matches it')
    .requiredOption('--key <file>', 'the public key (.public.pem)')
    .requiredOption('--signature <file>', 'the signature file (base64)')
    .option('--image <file>', 'the image the manifest describes')
    .argument('<manifest>', 'the manifest file')
    .action(async (manifest: string, options: { key: string; signature: string; image?: string }) => {
      try {
        process.stdout.write(await verifySignedManifest({ ...options, manifest }));
      } catch (error) {
        fail(error);
      }
    });

  program
    .command('push')
    .description('upload a signed image to Heliodor as a draft release')
    .requiredOption('--url <console>', 'the console address, e.g. https://heliodor.example')
    .option('--token <token>', 'API token with images:write (default: $HELIODOR_TOKEN)')
    .option('--image <file>', 'the firmware image')
    .option('--manifest <file>', 'the canonical manifest')
    .option('--signature <file>', 'the signature file (base64); with --add-signature, stdin when absent')
    .option('--notes <file or text>', 'release notes (plain text or Markdown)')
    .addOption(new Option('--channel <channel>', 'release channel').choices(['stable', 'early'] as const))
    .option('--add-signature', 'add one more signature to a draft instead: heliodor sign … | heliodor push --add-signature --release <id> --key <public.pem>')
    .option('--release <id>', 'with --add-signature: the draft release id')
    .option('--key <file>', "with --add-signature: the signer's public key (.public.pem)")
    .action(
      async (options: {
        url: string;
        token?: string;
        image?: string;
        manifest?: string;
        signature?: string;
        notes?: string;
        channel?: 'stable' | 'early';
        addSignature?: boolean;
        release?: string;
        key?: string;
      }) => {
        try {
          if (options.addSignature) {
            if (!options.release || !options.key) throw new CliError('--add-signature needs --release <id> and --key <public.pem>');
            const signature = options.signature ? await readFile(options.signature, 'utf8') : await stdinText();
            process.stdout.write(await addReleaseSignature({ url: options.url, token: options.token, release: options.release, key: options.key, signature }));
            return;
          }
          if (!options.image || !options.manifest || !options.signature) throw new CliError('push needs --image, --manifest and --signature');
          process.stdout.write(await pushRelease({ ...options, image: options.image, manifest: options.manifest, signature: options.signature }));
        } catch (error) {
          fail(error);
        }
      },
    );

  const trust = program.command('trust').description("a model's trust set");
  trust
    .command('sign')
    .description('sign the canonical text of a pending trust set offline; prints the body for POST /api/models/<id>/trust/signatures')
    .requiredOption('--key <file>', 'the private key (.private.pem) of a key in the previous version')
    .argument('<set>', 'the pending set\'s canonical text, saved to a file')
    .action(async (set: string, options: { key: string }) => {
      try {
        process.stdout.write(await signTrustSetFile({ key: options.key, set }));
      } catch (error) {
        fail(error);
      }
    });

  return program;
}

buildProgram()
  .parseAsync(process.argv)
  .catch((error: unknown) => fail(error));
