import { useEffect, useState } from 'react';

/**
 * False in the server-rendered HTML and until the island has hydrated. Forms keep their controls
 * disabled until then, so nothing typed or clicked in the first moments is silently lost.
 */
export function useHydrated(): boolean {
  const [hydrated, setHydrated] = useState(false);
  useEffect(() => setHydrated(true), []);
  return hydrated;
}
