'use client';
import { useEffect, useState } from 'react';

/** The current time in ms, re-read every `everyMs` (countdowns, "due in"). */
export function useNow(everyMs = 1000): number {
  const [now, setNow] = useState(() => Date.now());
  useEffect(() => {
    const timer = setInterval(() => setNow(Date.now()), everyMs);
    return () => clearInterval(timer);
  }, [everyMs]);
  return now;
}
