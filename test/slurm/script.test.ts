/**
 * The parts of a Slurm job that need no scheduler: Slurm's notations (time limits, memory, array
 * task lists, scontrol's one-line records) read as Slurm's documentation defines them (sbatch(1),
 * scontrol(1)), the job script's directives, and the options refused before anything is sent.
 */
import { describe, expect, it } from 'vitest';
import { expandTaskIds, parseRecord, schedulerMessage } from '../../src/slurm/commands.js';
import { checkSchedulerOption, jobScript, memoryMiB, stopMargin, taskRanges, timeLimitSeconds } from '../../src/slurm/script.js';
import { clusterSettings } from '../../src/cli/commands/cluster.js';
import { caseDocument, prepareCaseObject } from '../../src/run/case.js';

describe('Slurm notations', () => {
  it('reads time limits as sbatch --time does (sbatch(1): minutes, MM:SS, HH:MM:SS, D-HH, D-HH:MM, D-HH:MM:SS)', () => {
    expect(timeLimitSeconds('90')).toBe(5400);
    expect(timeLimitSeconds('5:30')).toBe(330);
    expect(timeLimitSeconds('2:00:00')).toBe(7200);
    expect(timeLimitSeconds('1-12')).toBe(129600);
    expect(timeLimitSeconds('1-00:30')).toBe(88200);
    expect(timeLimitSeconds('2-01:02:03')).toBe(2 * 86400 + 3723);
    expect(timeLimitSeconds('infinite')).toBeNull();
    expect(() => timeLimitSeconds('2h')).toThrow(/^--time-limit '2h' is not accepted \(accepted: Slurm's notation/);
  });

  it('reads memory amounts in MiB, a bare number being MiB as for sbatch --mem', () => {
    expect(memoryMiB('4096')).toBe(4096);
    expect(memoryMiB('512M')).toBe(512);
    expect(memoryMiB('4G')).toBe(4096);
    expect(memoryMiB('1.5GiB')).toBe(1536);
    expect(memoryMiB('1T')).toBe(1048576);
    expect(() => memoryMiB('lots')).toThrow(/^--memory 'lots' is not accepted/);
    expect(() => memoryMiB('0')).toThrow(/not accepted/);
  });

  it('writes and reads array task lists (sbatch --array; squeue and scontrol print them so)', () => {
    expect(taskRanges([0, 1, 2, 5, 7, 8])).toBe('0-2,5,7-8');
    expect(taskRanges([4])).toBe('4');
    expect(expandTaskIds('0-2,5,7-8')).toEqual([0, 1, 2, 5, 7, 8]);
    expect(expandTaskIds('[2-5%2]')).toEqual([2, 3, 4, 5]);
    expect(expandTaskIds('0-6:3')).toEqual([0, 3, 6]);
  });

  it("reads scontrol's one-line job records, values with spaces included", () => {
    const line =
      'JobId=41 ArrayJobId=40 ArrayTaskId=1 JobName=branchline-run-x UserId=root(0) JobState=CANCELLED Reason=None ExitCode=0:15 RunTime=00:00:05 NodeList=vm Command=/tmp/a b/job-1.sh WorkDir=/tmp/a b/slurm MinMemoryNode=320M';
    const r = parseRecord(line);
    expect(r.ArrayJobId).toBe('40');
    expect(r.JobState).toBe('CANCELLED');
    expect(r.ExitCode).toBe('0:15');
    expect(r.Command).toBe('/tmp/a b/job-1.sh');
    expect(r.WorkDir).toBe('/tmp/a b/slurm');
    expect(r.MinMemoryNode).toBe('320M');
  });

  it("keeps the scheduler's own words in one line", () => {
    expect(schedulerMessage('sbatch: error: invalid partition specified: nope\nsbatch: error: Batch job submission failed: Invalid partition name specified\n')).toBe(
      'invalid partition specified: nope; Batch job submission failed: Invalid partition name specified',
    );
  });
});

describe('the job script', () => {
  const settings = { timeLimit: '2:00:00', partition: 'long', account: 'combustion', schedulerOptions: ['--qos=night'], setup: ['module load nodejs/20'] };
  const text = jobScript({ name: 'branchline-refine-pile', tasks: [0, 1, 2, 4], memoryMiB: 1280, settings, folder: "/shared/it's here/slurm", node: '/usr/bin/node', entry: '/opt/branchline/bin/branchline.js' });

  it('asks for the array, memory, one CPU, the time limit, partition, account and the stop signal', () => {
    for (const d of ['--array=0-2,4', '--mem=1280M', '--cpus-per-task=1', '--time=2:00:00', '--partition=long', '--account=combustion', '--signal=B:USR2@300', '--output=logs/%A_%a.txt', '--qos=night']) {
      expect(text).toContain(`#SBATCH ${d}\n`);
    }
  });

  it('puts every directive before the first command, then the setup lines, then exec of this program', () => {
    const lines = text.trim().split('\n');
    const firstCommand = lines.findIndex((l) => !l.startsWith('#'));
    expect(lines.slice(firstCommand).every((l) => !l.startsWith('#SBATCH'))).toBe(true);
    expect(lines.slice(firstCommand)).toEqual(['set -e', 'module load nodejs/20', "exec '/usr/bin/node' '/opt/branchline/bin/branchline.js' task '/shared/it'\\''s here/slurm'"]);
  });

  it('signals a tenth of a short time limit before it, five minutes before a long one, or as asked', () => {
    expect(stopMargin({ schedulerOptions: [], setup: [], timeLimit: '10' })).toBe(60);
    expect(stopMargin({ schedulerOptions: [], setup: [], timeLimit: '1' })).toBe(30);
    expect(stopMargin({ schedulerOptions: [], setup: [], timeLimit: '12:00:00' })).toBe(300);
    expect(stopMargin({ schedulerOptions: [], setup: [] })).toBe(300);
    expect(stopMargin({ schedulerOptions: [], setup: [], timeLimit: '12:00:00', stopMargin: 900 })).toBe(900);
  });
});

describe('options refused before anything is sent', () => {
  it('refuses sbatch options that belong to the job', () => {
    expect(checkSchedulerOption('--qos=long')).toBe('--qos=long');
    expect(() => checkSchedulerOption('--array=0-3')).toThrow(/branchline sets this sbatch option itself/);
    expect(() => checkSchedulerOption('--signal=USR1@60')).toThrow(/branchline sets this sbatch option itself/);
    expect(() => checkSchedulerOption('qos=long')).toThrow(/is not accepted \(accepted: one sbatch option per use/);
  });

  it('checks names, margins and setup lines', () => {
    expect(() => clusterSettings({ slurm: true, partition: 'a b' }, [])).toThrow(/^--partition 'a b' is not accepted/);
    expect(() => clusterSettings({ slurm: true, timeLimit: '5', stopMargin: '300' }, [])).toThrow(/^--stop-margin 300: not less than the time limit \(5, 300 s\)/);
    expect(() => clusterSettings({ slurm: true, setup: ['  '] }, [])).toThrow(/^--setup '  ' is not accepted/);
    expect(() => clusterSettings({ memory: '4G' }, [])).toThrow('--memory needs --slurm (it is an option of runs sent to Slurm)');
    expect(clusterSettings({}, [])).toBeUndefined();
  });
});

describe('setup lines from the case (cluster.setup)', () => {
  const doc = (cluster: unknown): Record<string, unknown> => ({
    name: 'slab',
    model: 'bratu',
    grid: { intervals: [16] },
    continuation: { parameter: 'lambda', bounds: [0, 4] },
    cluster,
  });

  it('adds them after the command line\'s, once each, and keeps them in the case document', async () => {
    const p = await prepareCaseObject(doc({ setup: ['module load nodejs/20', 'export OMP_NUM_THREADS=1'] }), { label: 'slab.yaml', baseDir: '/tmp' });
    expect(caseDocument(p.case).cluster).toEqual({ setup: ['module load nodejs/20', 'export OMP_NUM_THREADS=1'] });
    const s = clusterSettings({ slurm: true, setup: ['export OMP_NUM_THREADS=1', 'umask 027'] }, [p]);
    expect(s?.setup).toEqual(['export OMP_NUM_THREADS=1', 'umask 027', 'module load nodejs/20']);
  });

  it('refuses lines that are not one shell line', async () => {
    await expect(prepareCaseObject(doc({ setup: ['module load a\nrm -rf x'] }), { label: 'slab.yaml', baseDir: '/tmp' })).rejects.toThrow(
      /^slab\.yaml: cluster\.setup\[0\]: .* is not accepted \(accepted: a list of shell lines/,
    );
    await expect(prepareCaseObject(doc({ setup: 'module load a' }), { label: 'slab.yaml', baseDir: '/tmp' })).rejects.toThrow(/^slab\.yaml: cluster\.setup: /);
    await expect(prepareCaseObject(doc({ partition: 'long' }), { label: 'slab.yaml', baseDir: '/tmp' })).rejects.toThrow(/^slab\.yaml: cluster: /);
  });
});
