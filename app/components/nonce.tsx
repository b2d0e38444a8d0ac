import { createContext } from "react";

/**
 * The Content-Security-Policy nonce of this server render (app/http/security.server.ts), for
 * React Router's inline scripts. Empty in the browser, which hides nonces from the DOM anyway.
 */
export const NonceContext = createContext("");
