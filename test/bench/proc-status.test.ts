// Reading /proc as the scale suite does: the status and children formats of proc(5), on texts
// in that format and on this very process.
import { spawn } from 'node:child_process';
import { describe, expect, it } from 'vitest';
import {
  childPidsOf,
  peakResidentBytesOf,
  readChildPids,
  readPeakResidentBytes,
} from './proc-status.js';

// The lines of a running process's status that matter here, in proc(5)'s layout (tab after the
// colon, the value right-aligned in kB).
const RUNNING_STATUS = [
  'Name:\tnode',
  'State:\tS (sleeping)',
  'Pid:\t4242',
  'VmPeak:\t 1190364 kB',
  'VmHWM:\t  215836 kB',
  'VmRSS:\t  201020 kB',
  '',
].join('\n');

// A zombie keeps its status file but has no memory lines (proc(5): the Vm* fields describe the
// address space, which a zombie no longer has).
const ZOMBIE_STATUS = ['Name:\tnode', 'State:\tZ (zombie)', 'Pid:\t4243', ''].join('\n');

describe('peakResidentBytesOf', () => {
  it('reads VmHWM, not VmPeak or VmRSS, in kB of 1024 bytes', () => {
    expect(peakResidentBytesOf(RUNNING_STATUS)).toBe(215_836 * 1024);
  });

  it('gives null for a status without VmHWM (a zombie)', () => {
    expect(peakResidentBytesOf(ZOMBIE_STATUS)).toBeNull();
  });
});

describe('childPidsOf', () => {
  it('reads the space-separated pids with their trailing space, and an empty file as none', () => {
    expect(childPidsOf('4301 4302 ')).toEqual([4301, 4302]);
    expect(childPidsOf('')).toEqual([]);
  });

  it('refuses a text that is not a list of pids, naming the field', () => {
    expect(() => childPidsOf('4301 x7')).toThrow(/"x7"/);
  });
});

describe('reading a live process', () => {
  it('reads its own peak, at least any RSS before it, and finds a child it started', async () => {
    // VmHWM is the peak of VmRSS (proc(5)), so no earlier reading of the RSS exceeds it.
    const residentBytesBefore = process.memoryUsage().rss;
    expect(readPeakResidentBytes(process.pid)).toBeGreaterThanOrEqual(residentBytesBefore);
    const child = spawn(process.execPath, ['-e', 'setTimeout(() => {}, 10000)'], {
      stdio: 'ignore',
    });
    try {
      await new Promise((resolve) => child.once('spawn', resolve));
      expect(readChildPids(process.pid)).toContain(child.pid);
      expect(readPeakResidentBytes(child.pid!)).toBeGreaterThan(0);
    } finally {
      child.kill('SIGKILL');
    }
    await new Promise((resolve) => child.once('exit', resolve));
  });

  it('reads an ended process as nothing: no peak, no children', () => {
    // pid_max on Linux is at most 2^22 (proc(5), /proc/sys/kernel/pid_max), so this pid is never live.
    const never = 2 ** 22 + 1;
    expect(readPeakResidentBytes(never)).toBeNull();
    expect(readChildPids(never)).toEqual([]);
  });
});
