// The small part of s3rver's API the stand-in uses (the package ships no types).
declare module "s3rver" {
  export type S3rverOptions = {
    port?: number;
    address?: string;
    directory: string;
    silent?: boolean;
    resetOnClose?: boolean;
    configureBuckets?: { name: string; configs: (string | Buffer)[] }[];
  };
  export default class S3rver {
    constructor(options: S3rverOptions);
    run(): Promise<{ address: string; port: number }>;
    close(): Promise<void>;
  }
}
