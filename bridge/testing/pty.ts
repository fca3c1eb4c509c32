import { spawn, spawnSync, type ChildProcess } from 'node:child_process';
import { SerialPort } from 'serialport';

/** Starts socat with a pseudo-terminal pair linked at a and b; resolves once both exist (it says so with -d -d). */
export function startPtyPair(a: string, b: string): Promise<ChildProcess> {
  const probe = spawnSync('socat', ['-V']);
  if (probe.error) {
    throw new Error(`socat is needed for the pseudo-terminal test and was not found (${probe.error.message}); install it: apt-get install socat`);
  }
  const child = spawn('socat', ['-d', '-d', `pty,raw,echo=0,link=${a}`, `pty,raw,echo=0,link=${b}`], { stdio: ['ignore', 'ignore', 'pipe'] });
  return new Promise((resolve, reject) => {
    let said = '';
    child.stderr?.on('data', (chunk: Buffer) => {
      said += chunk.toString();
      if (said.includes('starting data transfer loop')) resolve(child);
    });
    child.once('error', reject);
    child.once('exit', (code) => reject(new Error(`socat exited (${code}) before the ptys were ready: ${said}`)));
  });
}

export async function stopPtyPair(socat: ChildProcess | undefined): Promise<void> {
  if (!socat || socat.exitCode !== null) return;
  const exited = new Promise((resolve) => socat.once('exit', resolve));
  socat.kill('SIGTERM');
  await exited;
}

/** The analyzer's end of the pair, opened with serialport's real binding. */
export async function openAnalyzerEnd(path: string, baudRate = 9600): Promise<SerialPort> {
  const port = new SerialPort({ path, baudRate, autoOpen: false });
  await new Promise<void>((resolve, reject) => port.open((error) => (error ? reject(error) : resolve())));
  return port;
}

export function closePort(port: SerialPort | undefined): Promise<void> {
  return new Promise((resolve) => (port?.isOpen ? port.close(() => resolve()) : resolve()));
}
