import { createContext, useContext } from "react";

/** The per-response Content-Security-Policy nonce, provided by the server entry. */
export const NonceContext = createContext<string | undefined>(undefined);

export const useNonce = (): string | undefined => useContext(NonceContext);
