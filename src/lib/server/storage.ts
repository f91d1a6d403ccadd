import { S3Client, HeadBucketCommand, CreateBucketCommand } from '@aws-sdk/client-s3';
import { config } from './config';

export interface StorageSettings {
	endpoint: string;
	region: string;
	bucket: string;
	accessKeyId: string;
	secretAccessKey: string;
	forcePathStyle: boolean;
}

export function storageSettings(): StorageSettings {
	const s = config.storage;
	return {
		endpoint: s.endpoint,
		region: s.region,
		bucket: s.bucket,
		accessKeyId: s.accessKeyId,
		secretAccessKey: s.secretAccessKey,
		forcePathStyle: s.forcePathStyle
	};
}

export function makeS3(settings: StorageSettings = storageSettings()): S3Client {
	return new S3Client({
		endpoint: settings.endpoint,
		region: settings.region,
		forcePathStyle: settings.forcePathStyle,
		credentials: { accessKeyId: settings.accessKeyId, secretAccessKey: settings.secretAccessKey },
		// Non-AWS endpoints do not all understand the newer default integrity checksums.
		requestChecksumCalculation: 'WHEN_REQUIRED',
		responseChecksumValidation: 'WHEN_REQUIRED',
		maxAttempts: 2
	});
}

let client: S3Client | null = null;
export function s3(): S3Client {
	if (!client) client = makeS3();
	return client;
}

export async function headBucket(c: S3Client = s3(), bucket = config.storage.bucket): Promise<void> {
	await c.send(new HeadBucketCommand({ Bucket: bucket }));
}

/** Creates the bucket when it is missing (used by the start and test set-up). */
export async function ensureBucket(c: S3Client = s3(), bucket = config.storage.bucket): Promise<void> {
	try {
		await headBucket(c, bucket);
	} catch {
		await c.send(new CreateBucketCommand({ Bucket: bucket }));
	}
}
