/**
 * Demo cases offered by the server: the `*.yaml` files in one folder, addressed by name only.
 * A client's name is looked up in the listing; it is never joined into a path unchecked, so no
 * client string can reach another file.
 */
import { readFile, readdir } from 'node:fs/promises';
import { join } from 'node:path';
import { CASE_NAME } from './protocol.ts';

export interface CaseLibrary {
  /** Names of the cases (file names without `.yaml`), sorted. */
  list(): Promise<string[]>;
  /** The text of a case, or undefined when no case has that name. */
  read(name: string): Promise<string | undefined>;
}

export function caseLibrary(dir: string): CaseLibrary {
  const list = async (): Promise<string[]> => {
    let names: string[];
    try {
      names = await readdir(dir);
    } catch {
      return [];
    }
    return names
      .filter((f) => f.endsWith('.yaml'))
      .map((f) => f.slice(0, -'.yaml'.length))
      .filter((n) => CASE_NAME.test(n))
      .sort();
  };
  return {
    list,
    async read(name: string): Promise<string | undefined> {
      if (typeof name !== 'string' || !CASE_NAME.test(name)) return undefined;
      const known = await list();
      if (!known.includes(name)) return undefined;
      try {
        return await readFile(join(dir, `${name}.yaml`), 'utf8');
      } catch {
        return undefined;
      }
    },
  };
}
