// Loaded into the bridge process (node --import) only where a small tmpfs cannot be mounted: while the
// file named by BENCHWIRE_FAULT_ENOSPC exists, every file write fails as a full disk fails (ENOSPC).
import fs from 'node:fs';
import os from 'node:os';

const flag = process.env.BENCHWIRE_FAULT_ENOSPC;
if (flag) {
  const full = () => Object.assign(new Error('ENOSPC: no space left on device, write'), { code: 'ENOSPC', errno: -28, syscall: 'write' });
  const handle = await fs.promises.open(os.devNull, 'r');
  const proto = Object.getPrototypeOf(handle);
  await handle.close();
  for (const name of ['write', 'writev', 'writeFile', 'appendFile']) {
    const original = proto[name];
    proto[name] = function (...args) {
      if (fs.existsSync(flag)) return Promise.reject(full());
      return original.apply(this, args);
    };
  }
  for (const name of ['writeFile', 'appendFile']) {
    const original = fs.promises[name];
    fs.promises[name] = (...args) => (fs.existsSync(flag) ? Promise.reject(full()) : original(...args));
  }
}
