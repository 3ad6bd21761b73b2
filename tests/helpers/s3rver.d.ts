// The few parts of s3rver (a local fake S3 server, a devDependency) the object-storage tests use.
declare module 's3rver' {
  type Options = {
    address?: string;
    port?: number;
    silent?: boolean;
    directory?: string;
    configureBuckets?: { name: string; configs: (string | Buffer)[] }[];
  };
  export default class S3rver {
    constructor(options: Options);
    run(): Promise<{ address: string; port: number }>;
    close(): Promise<void>;
  }
}
