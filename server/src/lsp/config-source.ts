/**
 * Which `episcope.config.json` applies to a spec, and its parsed contents, cached until the file
 * changes. A config file open in the editor is read from the editor's (possibly unsaved) text, so an
 * edit to it re-analyses the specs at once; otherwise from disk.
 */
import { dirname } from 'node:path';
import { CONFIG_FILE_NAME, findConfigFile, parseConfigText, type ConfigFile } from '../config-file';
import { readFileSync } from 'node:fs';

export class ConfigSource {
  /** Config file path (or null for none) per spec folder. */
  private readonly located = new Map<string, string | null>();
  private readonly parsed = new Map<string, ConfigFile>();

  /** `openText(path)` gives the editor's text of an open config file, if it is open. */
  constructor(private readonly openText: (path: string) => string | undefined) {}

  /** The config file that applies to a spec at `specPath`, or undefined when there is none. */
  forSpec(specPath: string): ConfigFile | undefined {
    const folder = dirname(specPath);
    let configPath = this.located.get(folder);
    if (configPath === undefined) {
      configPath = findConfigFile(folder) ?? null;
      this.located.set(folder, configPath);
    }
    return configPath === null ? undefined : this.load(configPath);
  }

  load(configPath: string): ConfigFile {
    let file = this.parsed.get(configPath);
    if (!file) {
      const text = this.openText(configPath) ?? readOrUndefined(configPath);
      file = parseConfigText(configPath, text ?? '{}');
      this.parsed.set(configPath, file);
    }
    return file;
  }

  /** Forgets everything: a config file was created, changed or deleted. */
  invalidate(): void {
    this.located.clear();
    this.parsed.clear();
  }

  static isConfigPath(path: string): boolean {
    return path.endsWith(`/${CONFIG_FILE_NAME}`) || path.endsWith(`\\${CONFIG_FILE_NAME}`) || path === CONFIG_FILE_NAME;
  }
}

function readOrUndefined(path: string): string | undefined {
  try {
    return readFileSync(path, 'utf8');
  } catch {
    return undefined;
  }
}
