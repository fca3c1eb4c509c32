// npm run bridge:pack [-- --out DIR]: the bridge as one folder that runs with Node alone (no checkout,
// no npm install) on a lab PC:
//
//   bridge.cjs            bridge/cli.ts and everything it imports, bundled by esbuild
//   prebuilds/            serialport's native binding for each platform it ships (@serialport/bindings-cpp)
//   service/              the systemd unit and its environment file (README → Deployment)
//   THIRD-PARTY-LICENSES.txt
//
// The binding is found by node-gyp-build, which looks in <dir>/prebuilds/<platform>-<arch>/ where dir is
// the bindings-cpp package folder, written in its source as join(__dirname, '../'). Bundled, __dirname is
// the bundle's folder, so that one expression is rewritten to it and the prebuilds are copied beside it.
import fs from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { build, type Plugin } from 'esbuild';

const root = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..');
const BINDINGS = path.join(root, 'node_modules', '@serialport', 'bindings-cpp');
const LOOKUP = "(0, path_1.join)(__dirname, '../')";

/** Points the binding lookup at the bundle's own folder; fails the pack if bindings-cpp changed how it looks. */
const bindingNextToBundle: Plugin = {
  name: 'serialport-binding-next-to-bundle',
  setup(pack) {
    pack.onLoad({ filter: /[\\/]@serialport[\\/]bindings-cpp[\\/]dist[\\/]serialport-bindings\.js$/ }, async (file) => {
      const source = await fs.promises.readFile(file.path, 'utf8');
      if (!source.includes(LOOKUP)) {
        throw new Error(`${file.path} no longer finds its binding with ${LOOKUP}; update scripts/bridge-pack.ts`);
      }
      return { contents: source.replace(LOOKUP, '__dirname'), loader: 'js' };
    });
  },
};

export interface Pack {
  dir: string;
  bundle: string;
  version: string;
  bytes: number;
}

export async function packBridge(outDir: string): Promise<Pack> {
  const version = String(JSON.parse(fs.readFileSync(path.join(root, 'package.json'), 'utf8')).version);
  fs.rmSync(outDir, { recursive: true, force: true });
  fs.mkdirSync(outDir, { recursive: true });
  const bundle = path.join(outDir, 'bridge.cjs');
  const result = await build({
    absWorkingDir: root,
    entryPoints: [path.join(root, 'bridge', 'cli.ts')],
    outfile: bundle,
    bundle: true,
    platform: 'node',
    format: 'cjs',
    target: 'node20',
    metafile: true,
    logLevel: 'warning',
    plugins: [bindingNextToBundle],
    // cli.ts starts itself when it is the program: import.meta.url is the bundle's own file URL.
    banner: { js: '#!/usr/bin/env node\nconst __bridgeFileUrl = require("node:url").pathToFileURL(__filename).href;' },
    define: { 'import.meta.url': '__bridgeFileUrl', 'process.env.BENCHWIRE_BRIDGE_VERSION': JSON.stringify(version) },
  });
  fs.chmodSync(bundle, 0o755);
  fs.cpSync(path.join(BINDINGS, 'prebuilds'), path.join(outDir, 'prebuilds'), { recursive: true });
  fs.cpSync(path.join(root, 'bridge', 'service'), path.join(outDir, 'service'), { recursive: true });
  fs.writeFileSync(path.join(outDir, 'THIRD-PARTY-LICENSES.txt'), licenses(Object.keys(result.metafile.inputs)));
  return { dir: outDir, bundle, version, bytes: fs.statSync(bundle).size };
}

/** The licence text of every package with code in the bundle (their licences ask for it to travel along). */
function licenses(inputs: string[]): string {
  const packages = new Set<string>();
  for (const input of inputs) {
    const match = /^(.*node_modules[\\/](?:@[^\\/]+[\\/])?[^\\/]+)[\\/]/.exec(input);
    if (match) packages.add(match[1]);
  }
  return [...packages]
    .sort()
    .map((dir) => {
      const full = path.join(root, dir);
      const manifest = JSON.parse(fs.readFileSync(path.join(full, 'package.json'), 'utf8')) as { name: string; version: string; license?: string };
      const file = fs.readdirSync(full).find((name) => /^licen[cs]e/i.test(name));
      const text = file ? fs.readFileSync(path.join(full, file), 'utf8').trim() : `(no licence file; package.json says ${manifest.license ?? 'nothing'})`;
      return `${manifest.name} ${manifest.version}\n${'-'.repeat(60)}\n${text}\n`;
    })
    .join('\n');
}

if (process.argv[1] && path.resolve(process.argv[1]) === fileURLToPath(import.meta.url)) {
  const at = process.argv.indexOf('--out');
  const out = path.resolve(at > 0 && process.argv[at + 1] ? process.argv[at + 1] : path.join(root, 'dist', 'bridge'));
  packBridge(out).then(
    (pack) => console.log(`bridge ${pack.version} packed in ${pack.dir} (bridge.cjs ${(pack.bytes / 1024).toFixed(0)} kB + prebuilds/); run it with: node ${path.relative(process.cwd(), pack.bundle) || pack.bundle} --help`),
    (error) => {
      console.error(`bridge:pack failed: ${error instanceof Error ? error.message : String(error)}`);
      process.exit(1);
    },
  );
}
