// `npm run package`: builds episcope-<version>.vsix with @vscode/vsce.
//
// The bundles in dist/ hold everything except esbuild, which TypeScript specs need at run time
// (it bundles the spec's local imports) and which is a native binary per platform. So the package
// carries esbuild and the binary of the platform it is built on, and is marked for that platform
// (`--target`); build it on each platform you ship to. .vscodeignore keeps everything else out.
import { execFileSync } from 'node:child_process';
import { existsSync, readFileSync, statSync } from 'node:fs';
import { createRequire } from 'node:module';

const require = createRequire(import.meta.url);
const { version } = JSON.parse(readFileSync('package.json', 'utf8'));

// vsce's target names for the platforms esbuild publishes a binary for.
const targets = {
  'linux-x64': 'linux-x64',
  'linux-arm64': 'linux-arm64',
  'linux-arm': 'linux-armhf',
  'darwin-x64': 'darwin-x64',
  'darwin-arm64': 'darwin-arm64',
  'win32-x64': 'win32-x64',
  'win32-arm64': 'win32-arm64',
};
const host = `${process.platform}-${process.arch}`;
const target = targets[host];
if (!target) {
  console.error(`Cannot package for ${host}: no VS Code target of that name.`);
  process.exit(2);
}
const binaryPackage = `@esbuild/${host}`;
try {
  require.resolve(`${binaryPackage}/package.json`);
} catch {
  console.error(`${binaryPackage} is not installed (run npm ci); the package would not run TypeScript specs.`);
  process.exit(2);
}

const out = `episcope-${version}.vsix`;
const vsce = require.resolve('@vscode/vsce/vsce');
// vsce runs `vscode:prepublish` (the esbuild bundles) first. The README's relative links and
// images stay relative (there is no repository URL to point them at); the screenshots travel in the
// package, so VS Code's extension page shows them.
try {
  execFileSync(
    process.execPath,
    [vsce, 'package', '--target', target, '--out', out, '--allow-missing-repository', '--no-rewrite-relative-links'],
    {
      stdio: 'inherit',
    },
  );
} catch (error) {
  console.error(`vsce package failed (exit ${error.status ?? 'unknown'}); its message is above.`);
  process.exit(1);
}
if (!existsSync(out)) {
  console.error(`vsce did not write ${out}`);
  process.exit(1);
}
console.log(`${out}: ${(statSync(out).size / 1024 / 1024).toFixed(2)} MB (${target})`);
