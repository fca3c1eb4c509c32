import 'server-only';
import { escalateOverdueAlerts } from '@/lib/clinical/escalation';
import { deliverDueMail } from '@/lib/mail/queue';

// The server's own timed work: escalating unacknowledged critical results, then sending queued e-mail.
// One round at a time; a failing round is logged and the next one tries again.

export function startBackgroundWork(options: { everyMs?: number } = {}) {
  const everyMs = options.everyMs ?? Number(process.env.BACKGROUND_TICK_MS ?? 5000);
  let running = false;
  const round = async () => {
    if (running) return;
    running = true;
    try {
      const escalated = await escalateOverdueAlerts(new Date());
      if (escalated.length) console.log(`[benchwire] escalated ${escalated.length} unacknowledged critical result(s) by e-mail`);
      await deliverDueMail();
    } catch (error) {
      console.error('[benchwire] background round failed', error);
    } finally {
      running = false;
    }
  };
  const timer = setInterval(() => void round(), everyMs);
  timer.unref();
  void round();
  return () => clearInterval(timer);
}
