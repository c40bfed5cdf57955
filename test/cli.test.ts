import { spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { isAbsolute, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import type { Command } from 'commander';
import { afterEach, describe, expect, it } from 'vitest';
import { commandModules } from '../src/cli/commands/index.js';
import { buildProgram } from '../src/cli/program.js';
import { runCommand, type RegisterCommand } from '../src/cli/run-command.js';
import { InputError } from '../src/errors.js';
import { cli } from './support/run-cli.js';

const projectRoot = fileURLToPath(new URL('..', import.meta.url));
const freshFolder = () => mkdtempSync(join(tmpdir(), 'spendmix-cli-'));


/** The one JSON object a --json run prints: exactly one line on stdout, nothing else. */
function onlyJson(stdout: string): Record<string, unknown> {
  const lines = stdout.split('\n');
  expect(lines.at(-1)).toBe('');
  expect(lines).toHaveLength(2);
  const value = JSON.parse(lines[0]);
  expect(typeof value === 'object' && value !== null && !Array.isArray(value)).toBe(true);
  return value;
}

/** Commands registered by a test, removed again after it. */
const injected: RegisterCommand[] = [];
function inject(register: RegisterCommand): void {
  injected.push(register);
  commandModules.push(register);
}
afterEach(() => {
  for (const register of injected.splice(0)) commandModules.splice(commandModules.indexOf(register), 1);
});

describe('CLI conventions (DESIGN.md §10): demo --out', () => {
  it('prints exactly one JSON object {dir, customers, receipts, visits} with --json', async () => {
    const out = join(freshFolder(), 'demo');
    const run = await cli('demo', '--out', out, '--customers', '40', '--seed', '5', '--json');
    expect(run.stderr).toBe('');
    expect(run.code).toBe(0);
    const json = onlyJson(run.stdout);
    expect(Object.keys(json).sort()).toEqual(['customers', 'dir', 'receipts', 'visits']);
    expect(json.dir).toBe(out);
    expect(isAbsolute(json.dir as string)).toBe(true);
    const manifest = JSON.parse(readFileSync(join(out, 'manifest.json'), 'utf8'));
    expect(json).toEqual({ dir: out, customers: 40, receipts: manifest.receipts, visits: manifest.visits });
    // receipts are distinct receipts, not department rows
    const receiptIds = new Set(readFileSync(join(out, 'receipts.csv'), 'utf8').trim().split('\n').slice(1).map((line) => line.split(',')[0]));
    expect(json.receipts).toBe(receiptIds.size);
    expect(manifest.receiptRows).toBeGreaterThan(receiptIds.size);
  });

  it('prints human text without --json, and the same seed gives the same counts', async () => {
    const first = await cli('demo', '--out', freshFolder(), '--customers', '25', '--seed', '9');
    expect(first.code).toBe(0);
    expect(first.stdout).toMatch(/^Wrote the Larkmoor Fresh Markets demo to .+\n {2}25 customers, [\d,]+ receipts/);
    expect(() => JSON.parse(first.stdout)).toThrow();
    const again = await cli('demo', '--out', freshFolder(), '--customers', '25', '--seed', '9');
    expect(again.stdout.split('\n').slice(1)).toEqual(first.stdout.split('\n').slice(1));
  });

  it.each([
    [['--customers', '0'], /customers in the demo chain \(customers, --customers\) must be at least 1 \(got 0\)/],
    [['--customers', '200001'], /customers in the demo chain \(customers, --customers\) must be at most 200000 \(got 200001\)/],
    [['--customers', 'many'], /\(customers, --customers\) must be a number \(got "many"\)/],
    [['--customers', '1.5'], /\(customers, --customers\) must be a whole number \(got 1.5\)/],
    [['--seed', '-3'], /the generator's seed \(seed, --seed\) must be at least 0 \(got -3\)/],
    [[], /demo needs --out DIR/],
  ])('exits 2 with a message on stderr for bad input: demo %j', async (args, message) => {
    const out = args.length === 0 ? [] : ['--out', freshFolder()];
    for (const json of [false, true]) {
      const run = await cli('demo', ...out, ...args, ...(json ? ['--json'] : []));
      expect(run.code).toBe(2);
      expect(run.stdout).toBe('');
      expect(run.stderr).toMatch(message);
      expect(run.stderr.startsWith('spendmix: ')).toBe(true);
    }
  });

  it('exits 2 for an output folder that is a file, sits below a file, or holds other files', async () => {
    const folder = freshFolder();
    const file = join(folder, 'report.txt');
    writeFileSync(file, 'not a demo');
    for (const [out, message] of [
      [file, /is a file, not a folder/],
      [join(file, 'below'), /Cannot write the demo files into .*ENOTDIR/],
      [folder, /already holds other files \(report\.txt\)/],
    ] as const) {
      const run = await cli('demo', '--out', out, '--customers', '5', '--json');
      expect(run.code).toBe(2);
      expect(run.stdout).toBe('');
      expect(run.stderr).toMatch(message);
    }
    expect(readFileSync(file, 'utf8')).toBe('not a demo');
  });

  it('exits 2 on unknown options, unknown commands and missing option values', async () => {
    const unknownOption = await cli('demo', '--out', freshFolder(), '--bogus');
    expect(unknownOption.code).toBe(2);
    expect(unknownOption.stderr).toMatch(/unknown option '--bogus'/);
    expect(unknownOption.stdout).toBe('');
    const unknownCommand = await cli('frobnicate');
    expect(unknownCommand.code).toBe(2);
    expect(unknownCommand.stderr).toMatch(/unknown command 'frobnicate'/);
    const missingValue = await cli('demo', '--customers');
    expect(missingValue.code).toBe(2);
    expect(missingValue.stderr).toMatch(/argument missing/);
  });
});

describe('CLI conventions: help and internal failures', () => {
  it('--help works for the program and for each command (and each subcommand of a command group)', async () => {
    const program = buildProgram({ stdout: () => undefined, stderr: () => undefined }, () => undefined);
    const paths: string[][] = [];
    const leaf = new Set<string>();
    const walk = (command: Command, path: string[]) => {
      for (const sub of command.commands) {
        paths.push([...path, sub.name()]);
        if (sub.commands.length === 0) leaf.add([...path, sub.name()].join(' '));
        walk(sub, [...path, sub.name()]);
      }
    };
    walk(program, []);
    expect(paths.map((path) => path.join(' '))).toContain('demo');
    const top = await cli('--help');
    expect(top.code).toBe(0);
    for (const path of paths) {
      const name = path.join(' ');
      if (path.length === 1) expect(top.stdout).toContain(name);
      const help = await cli(...path, '--help');
      expect(help.code, name).toBe(0);
      expect(help.stdout, name).toContain(`Usage: spendmix ${name}`);
      expect(help.stderr, name).toBe('');
      // every command that does the work takes --json (DESIGN.md §10); a group lists its commands
      if (leaf.has(name)) expect(help.stdout, name).toContain('--json');
    }
    const demoHelp = await cli('demo', '--help');
    expect(demoHelp.stdout).toMatch(/receipts counts distinct receipts/);
  });

  it('exits 1 with "internal error" on stderr when a command fails with a plain Error', async () => {
    inject((program, io, setExitCode) => {
      program
        .command('explode')
        .option('--json')
        .action(async (options: { json?: boolean }) => {
          setExitCode(
            await runCommand(io, Boolean(options.json), async () => {
              throw new Error('the disk went away');
            }),
          );
        });
    });
    for (const json of [[], ['--json']]) {
      const run = await cli('explode', ...json);
      expect(run.code).toBe(1);
      expect(run.stdout).toBe('');
      expect(run.stderr).toBe('spendmix: internal error: the disk went away\n');
    }
  });

  it('exits 1 when a command throws outside runCommand, and 2 when that is an InputError', async () => {
    inject((program) => {
      program.command('crash').action(() => {
        throw new TypeError('cannot read properties of undefined');
      });
      program.command('refuse').action(() => {
        throw new InputError('--thing must be given.');
      });
    });
    const crash = await cli('crash');
    expect(crash.code).toBe(1);
    expect(crash.stderr).toMatch(/^spendmix: internal error: cannot read properties of undefined/);
    const refuse = await cli('refuse');
    expect(refuse.code).toBe(2);
    expect(refuse.stderr).toBe('spendmix: --thing must be given.\n');
  });
});

describe('CLI as a process (the real exit codes)', () => {
  const spawnCli = (args: string[], script = 'src/cli/main.ts') =>
    spawnSync(process.execPath, ['--import', 'tsx', script, ...args], { cwd: projectRoot, encoding: 'utf8', timeout: 60_000 });

  it('exits 0 with one JSON object, and 2 with a message on stderr for bad input', () => {
    const out = join(freshFolder(), 'demo');
    const ok = spawnCli(['demo', '--out', out, '--customers', '30', '--json']);
    expect(ok.stderr).toBe('');
    expect(ok.status).toBe(0);
    expect(Object.keys(onlyJson(ok.stdout)).sort()).toEqual(['customers', 'dir', 'receipts', 'visits']);
    const bad = spawnCli(['demo', '--out', out, '--customers', '-4', '--json']);
    expect(bad.status).toBe(2);
    expect(bad.stdout).toBe('');
    expect(bad.stderr).toMatch(/\(customers, --customers\) must be at least 1 \(got -4\)/);
  });

  it('stops quietly when the reader of its output goes away (`| head`), keeping its exit code', () => {
    // `true` exits without reading, so every write to the pipe fails with EPIPE; before, Node printed
    // an unhandled-error trace and exited 1.
    const folder = freshFolder();
    const entry = join(projectRoot, 'src/cli/main.ts');
    const piped = (args: string) =>
      spawnSync('bash', ['-c', `"${process.execPath}" --import tsx "${entry}" ${args} 2>"${folder}/stderr.txt" | true; echo "\${PIPESTATUS[0]}"`], {
        cwd: projectRoot,
        encoding: 'utf8',
        timeout: 60_000,
      });
    const help = piped('export --help');
    expect(help.stdout.trim()).toBe('0');
    expect(readFileSync(join(folder, 'stderr.txt'), 'utf8')).toBe('');
    const demo = piped(`demo --out "${folder}/demo" --customers 30`);
    expect(demo.stdout.trim()).toBe('0');
    expect(readFileSync(join(folder, 'stderr.txt'), 'utf8')).toBe('');
    expect(readFileSync(join(folder, 'demo', 'customers.csv'), 'utf8').split('\n').length).toBeGreaterThan(30);
  });

  it('exits 1 on an internal failure', () => {
    // A tiny entry point like src/cli/main.ts whose one command fails with a plain Error.
    const script = join(freshFolder(), 'failing-main.ts');
    const url = (path: string) => new URL(path, `file://${projectRoot}/`).href;
    writeFileSync(
      script,
      [
        `import { commandModules } from '${url('src/cli/commands/index.ts')}';`,
        `import { runCli } from '${url('src/cli/program.ts')}';`,
        `import { processIo } from '${url('src/cli/run-command.ts')}';`,
        "commandModules.push((program) => { program.command('explode').action(() => { throw new Error('boom'); }); });",
        'process.exitCode = await runCli(process.argv.slice(2), processIo);',
        '',
      ].join('\n'),
    );
    writeFileSync(join(script, '..', 'package.json'), '{"type":"module"}\n');
    const run = spawnCli(['explode'], script);
    expect(run.status).toBe(1);
    expect(run.stderr).toBe('spendmix: internal error: boom\n');
  });
});
