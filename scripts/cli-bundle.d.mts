export declare const CLI_BUNDLE: string
export declare function cliBundleStale(): boolean
export declare function buildCli(): Promise<void>
export declare function ensureCli(): Promise<void>
