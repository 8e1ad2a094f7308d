// The per-response nonce that lets the document's own scripts run under the content security
// policy (set in app/entry.server.tsx). Read with useNonce() where a <script> is rendered.
import { createContext, useContext } from "react";

export const NonceContext = createContext<string | undefined>(undefined);

export function useNonce(): string | undefined {
  return useContext(NonceContext);
}
