// What the scale suite reads of a live process from /proc (proc(5)): its peak resident set
// (VmHWM in /proc/PID/status, the high-water mark of VmRSS, which only grows) and its child
// processes (/proc/PID/task/TID/children, one line of space-separated pids per thread). A
// process may end between two reads, and a zombie's status has no Vm* lines: both read as
// "nothing now" (null or no children), never as an error.

import { readdirSync, readFileSync } from 'node:fs';

const KIB_BYTES = 1024;

/** VmHWM in bytes from the text of /proc/PID/status ("VmHWM:  123456 kB"); null when absent. */
export function peakResidentBytesOf(statusText: string): number | null {
  const match = /^VmHWM:\s+(\d+)\s+kB$/m.exec(statusText);
  return match === null ? null : Number(match[1]) * KIB_BYTES;
}

/** The pids in the text of one /proc/PID/task/TID/children file ("1234 1235 "). */
export function childPidsOf(childrenText: string): number[] {
  const fields = childrenText.trim();
  if (fields === '') return [];
  return fields.split(/\s+/).map((field) => {
    if (!/^\d+$/.test(field)) throw new Error(`bench: "${field}" in a children file is not a pid`);
    return Number(field);
  });
}

/** The text of a /proc file, or null when the process (or thread) is gone. */
function readProcText(path: string): string | null {
  try {
    return readFileSync(path, 'utf8');
  } catch (error) {
    const code = (error as NodeJS.ErrnoException).code;
    if (code === 'ENOENT' || code === 'ESRCH') return null;
    throw error;
  }
}

/** The peak resident bytes of a live process, or null when it has ended. */
export function readPeakResidentBytes(pid: number): number | null {
  const status = readProcText(`/proc/${pid}/status`);
  return status === null ? null : peakResidentBytesOf(status);
}

/** The direct children of a live process, from every one of its threads; [] once it has ended. */
export function readChildPids(pid: number): number[] {
  let threads: string[];
  try {
    threads = readdirSync(`/proc/${pid}/task`);
  } catch {
    return [];
  }
  const pids = new Set<number>();
  for (const tid of threads) {
    const text = readProcText(`/proc/${pid}/task/${tid}/children`);
    if (text !== null) for (const child of childPidsOf(text)) pids.add(child);
  }
  return [...pids].sort((a, b) => a - b);
}
