// Types of bin/build-cli.mjs for the TypeScript code that imports it (the start-up bench).
export declare const ROOT: string;
export declare const CLI_DIR: string;
export declare const CLI_ENTRY: string;
export declare function cliBuildIsFresh(): boolean;
export declare function buildCli(options?: { quiet?: boolean }): Promise<void>;
