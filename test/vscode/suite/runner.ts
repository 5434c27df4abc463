/**
 * A minimal test runner for the extension host: named async checks run one after another, each
 * reported as it finishes, and a closing line "N passed, N failed". It throws when any check
 * failed, which is how an extension-test entry tells VS Code that the run failed.
 */
type Check = () => Promise<void>;

const checks: Array<{ name: string; check: Check }> = [];

export function test(name: string, check: Check): void {
  checks.push({ name, check });
}

export async function runChecks(log: (line: string) => void = (line) => console.log(line)): Promise<void> {
  let passed = 0;
  const failed: string[] = [];
  for (const { name, check } of checks) {
    const started = Date.now();
    try {
      await check();
      passed += 1;
      log(`  ok   ${name} (${Date.now() - started} ms)`);
    } catch (error) {
      failed.push(name);
      log(
        `  FAIL ${name} (${Date.now() - started} ms)\n${error instanceof Error ? (error.stack ?? error.message) : String(error)}`,
      );
    }
  }
  log(`${passed} passed, ${failed.length} failed`);
  if (failed.length > 0) throw new Error(`Failed: ${failed.join('; ')}`);
}

/** Polls `probe` until it returns a value other than undefined, or fails with `what` after `timeoutMs`. */
export async function eventually<T>(
  what: string,
  probe: () => T | undefined | Promise<T | undefined>,
  timeoutMs = 60_000,
): Promise<T> {
  const deadline = Date.now() + timeoutMs;
  for (;;) {
    const value = await probe();
    if (value !== undefined) return value;
    if (Date.now() > deadline) throw new Error(`Timed out after ${timeoutMs} ms waiting for ${what}`);
    await new Promise((done) => setTimeout(done, 100));
  }
}

export function check(condition: unknown, message: string): asserts condition {
  if (!condition) throw new Error(message);
}
