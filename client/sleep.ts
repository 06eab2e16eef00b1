// A promise that resolves after a number of seconds (the wall clock's real waits).

import { setTimeout as delay } from 'node:timers/promises';

export function sleepSeconds(seconds: number): Promise<void> {
  return seconds > 0 ? delay(seconds * 1000) : Promise.resolve();
}
