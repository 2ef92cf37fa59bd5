import { createContext, useContext } from "react";

/** The CSP nonce of the document being rendered on the server ("" in the browser, where it is not needed). */
const NonceContext = createContext("");
export const NonceProvider = NonceContext.Provider;
export const useNonce = () => useContext(NonceContext);
