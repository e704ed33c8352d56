// Packages loaded on first use, so that a command pays only for what it needs.
import { createRequire } from "node:module";

const require = createRequire(import.meta.url);

/** A getter that loads the named package the first time it is called and keeps it. */
export function lazyModule<T>(name: string): () => T {
  let loaded: T | null = null;
  return () => {
    if (loaded === null) loaded = require(name) as T;
    return loaded;
  };
}
