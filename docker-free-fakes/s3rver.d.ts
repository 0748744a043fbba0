declare module 's3rver' {
	interface S3rverOptions {
		address?: string;
		port?: number;
		directory: string;
		silent?: boolean;
		resetOnClose?: boolean;
		configureBuckets?: { name: string; configs: (string | Buffer)[] }[];
	}
	export default class S3rver {
		constructor(options: S3rverOptions);
		run(): Promise<{ address: string; port: number }>;
		close(): Promise<void>;
		/** Makes the configured buckets (what run() does before it listens). */
		configureBuckets(): Promise<void>;
		/** The Koa request handler, for a server of our own (s3-fake.ts puts a signature check in front). */
		callback(): (
			request: import('node:http').IncomingMessage,
			response: import('node:http').ServerResponse
		) => void;
	}
}
