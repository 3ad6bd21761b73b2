// Whether node_modules matches package-lock.json, read the way npm records an install: npm writes the
// installed tree to node_modules/.package-lock.json ("Hidden Lockfiles", npm's package-lock.json
// documentation, npm 7 and later), so `npm start` after a manual `npm ci` installs nothing again.
//
// The fixtures (tests/unit/fixtures/lockfiles/) are small lockfiles in npm's lockfileVersion 3 format;
// their entries are copied from this repository's package-lock.json as npm 11 wrote it, and the
// changed version's integrity is semver 7.8.5's as the npm registry publishes it (`npm view
// semver@7.8.5 dist.integrity`).
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';

// scripts/lib/bootstrap.js is plain CommonJS (it runs before node_modules exists).
// eslint-disable-next-line @typescript-eslint/no-require-imports
const { lockfileDifferences, nodeModulesStale } = require('../../scripts/lib/bootstrap') as {
  lockfileDifferences: (wanted: unknown, hidden: unknown, platform?: { os: string; cpu: string; libc: string | null }) => string[];
  nodeModulesStale: (dir: string) => string | null;
};

const fixtures = path.join(__dirname, 'fixtures', 'lockfiles');
const read = (name: string) => JSON.parse(fs.readFileSync(path.join(fixtures, name), 'utf8'));
const linux = { os: 'linux', cpu: 'x64', libc: 'glibc' };
const mac = { os: 'darwin', cpu: 'arm64', libc: null };
const wanted = read('package-lock.json');

describe('node_modules against package-lock.json', () => {
  test('when the hidden lockfile lists the same packages at the same versions and integrity, then nothing differs (fsevents is skipped off macOS, as npm does for its os list)', () => {
    expect(lockfileDifferences(wanted, read('hidden-match.json'), linux)).toEqual([]);
  });

  test('when a package was installed at another version, then that package is named with both versions', () => {
    expect(lockfileDifferences(wanted, read('hidden-changed-version.json'), linux)).toEqual([
      'node_modules/semver is 7.8.5, package-lock.json says 7.8.6',
    ]);
  });

  test('when a package the lockfile wants is not installed, then it is named as missing', () => {
    expect(lockfileDifferences(wanted, read('hidden-missing-package.json'), linux)).toEqual(['node_modules/suncalc is missing']);
  });

  test('when only the dev and devOptional flags and descriptive fields differ, then nothing differs (npm records them per install, the package is the same)', () => {
    expect(lockfileDifferences(wanted, read('hidden-dev-flags.json'), linux)).toEqual([]);
  });

  test('when an optional package fits this machine but is not installed, then it is missing (fsevents on macOS)', () => {
    expect(lockfileDifferences(wanted, read('hidden-match.json'), mac)).toEqual(['node_modules/fsevents is missing']);
  });

  test('when node_modules holds a package the lockfile no longer lists, then it differs (npm ci would remove it)', () => {
    const hidden = read('hidden-match.json');
    hidden.packages['node_modules/left-behind'] = { version: '1.0.0', integrity: 'sha512-AAAA' };
    expect(lockfileDifferences(wanted, hidden, linux)).toEqual(['node_modules/left-behind is not in package-lock.json']);
  });

  test('when the same version came from another tarball, then it differs by its integrity', () => {
    const hidden = read('hidden-match.json');
    hidden.packages['node_modules/suncalc'].integrity = read('hidden-changed-version.json').packages['node_modules/semver'].integrity;
    expect(lockfileDifferences(wanted, hidden, linux)).toEqual(['node_modules/suncalc came from elsewhere']);
  });

  test('when npm itself installed this repository (its own hidden lockfile), then the comparison agrees that nothing differs', () => {
    // The hidden lockfile here was written by npm ci / npm install, the reference this comparison follows.
    const root = path.resolve(__dirname, '../..');
    const mine = JSON.parse(fs.readFileSync(path.join(root, 'package-lock.json'), 'utf8'));
    const npmWrote = JSON.parse(fs.readFileSync(path.join(root, 'node_modules', '.package-lock.json'), 'utf8'));
    expect(lockfileDifferences(mine, npmWrote)).toEqual([]);
  });
});

describe('a project folder', () => {
  let dir: string;
  beforeEach(() => {
    dir = fs.mkdtempSync(path.join(os.tmpdir(), 'heliodor-lock-'));
    fs.copyFileSync(path.join(fixtures, 'package-lock.json'), path.join(dir, 'package-lock.json'));
  });
  afterEach(() => fs.rmSync(dir, { recursive: true, force: true }));

  const install = (hiddenName: string) => {
    const hidden = read(hiddenName);
    for (const key of Object.keys(hidden.packages)) fs.mkdirSync(path.join(dir, key), { recursive: true });
    fs.writeFileSync(path.join(dir, 'node_modules', '.package-lock.json'), JSON.stringify(hidden));
  };

  test('when node_modules does not exist, then it needs an install', () => {
    expect(nodeModulesStale(dir)).toBe('node_modules is missing');
  });

  test('when npm recorded the same tree, then no install is needed', () => {
    install('hidden-match.json');
    expect(nodeModulesStale(dir)).toBeNull();
  });

  test('when a package folder was deleted by hand after the install, then it needs an install (npm trusts its record only while every folder it names exists)', () => {
    install('hidden-match.json');
    fs.rmSync(path.join(dir, 'node_modules', 'suncalc'), { recursive: true });
    expect(nodeModulesStale(dir)).toBe('node_modules/suncalc was removed by hand');
  });

  test('when the record differs, then the reason names the first difference', () => {
    install('hidden-changed-version.json');
    expect(nodeModulesStale(dir)).toBe('node_modules differs from package-lock.json: node_modules/semver is 7.8.5, package-lock.json says 7.8.6');
  });

  test('when node_modules exists without npm\'s record, then it needs an install', () => {
    fs.mkdirSync(path.join(dir, 'node_modules'));
    expect(nodeModulesStale(dir)).toMatch(/no record of its install/);
  });
});
