// A local SMTP server that keeps every message as an .eml file, so e-mail features can be tried
// without sending anything anywhere. Started by `npm start` for the demo.
import fs from 'node:fs';
import path from 'node:path';
import { SMTPServer } from 'smtp-server';

export function startMailSink(options: { port: number; dir: string; host?: string }) {
  fs.mkdirSync(options.dir, { recursive: true });
  let counter = 0;
  const server = new SMTPServer({
    authOptional: true,
    disabledCommands: ['STARTTLS'],
    size: 10 * 1024 * 1024,
    banner: 'Benchwire local mail sink (nothing leaves this machine)',
    onData(stream, session, callback) {
      const file = path.join(options.dir, `${new Date().toISOString().replace(/[:.]/g, '-')}-${++counter}.eml`);
      const out = fs.createWriteStream(file);
      stream.pipe(out);
      // Answer 250 only once the file is complete on disk, so whoever reads the folder next sees it whole.
      out.on('finish', () => {
        const from = session.envelope.mailFrom ? session.envelope.mailFrom.address : '(unknown)';
        console.log(`[mail-sink] kept a message from ${from} in ${file}`);
        callback();
      });
      stream.on('error', callback);
      out.on('error', callback);
    },
  });
  server.on('error', (error) => console.error('[mail-sink] error', error.message));
  return new Promise<SMTPServer>((resolve) => server.listen(options.port, options.host ?? '127.0.0.1', () => resolve(server)));
}
