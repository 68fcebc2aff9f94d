// `critbox serve` for the tests: the server users get, started on a free
// port of 127.0.0.1 and stopped again. Shared by tests/node and tests/browser.

import { spawn } from 'node:child_process';
import path from 'node:path';
import { fileURLToPath } from 'node:url';

const root = process.env.CRITBOX_ROOT || path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..');
const cli = process.env.CRITBOX_CLI || path.join(root, 'target', 'release', 'critbox');

/**
 * `critbox serve --root FOLDER --port 0`: resolves {url, close()} once it
 * prints the address it listens on (url ends with '/').
 */
export function startServe(folder = path.join(root, 'web')) {
  return new Promise((resolve, reject) => {
    const child = spawn(cli, ['serve', '--root', folder, '--port', '0'], { stdio: ['ignore', 'pipe', 'pipe'] });
    let out = '';
    let err = '';
    const timer = setTimeout(() => { child.kill(); reject(new Error(`critbox serve printed no address in 20 s: ${out}${err}`)); }, 20000);
    child.on('error', (e) => { clearTimeout(timer); reject(new Error(`could not start ${cli} serve: ${e.message}`)); });
    child.on('exit', (code) => { clearTimeout(timer); reject(new Error(`critbox serve exited with ${code}: ${out}${err}`)); });
    child.stderr.on('data', (d) => { err += d; });
    child.stdout.on('data', (d) => {
      out += d;
      const m = /http:\/\/127\.0\.0\.1:\d+\//.exec(out);
      if (!m) return;
      clearTimeout(timer);
      child.removeAllListeners('exit');
      resolve({
        url: m[0],
        close: () => new Promise((done) => { child.once('exit', () => done()); child.kill(); }),
      });
    });
  });
}
