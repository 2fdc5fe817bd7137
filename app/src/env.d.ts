/// <reference types="vite/client" />
/// <reference types="vite-plugin-pwa/client" />

/** Version string baked in at build time (vite define). */
declare const __APP_VERSION__: string;
