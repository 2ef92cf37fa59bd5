/**
 * The local object-storage stand-in: `s3rver`, an S3-compatible server on loopback that keeps
 * its objects in a folder (so a restart loses nothing), with the app's bucket created at start.
 * The app talks to it with the same AWS SDK calls it makes to real object storage.
 *
 *   HTTP  127.0.0.1:$S3_STANDIN_PORT  (default 4569)  bucket $S3_BUCKET (default dioptra-files)
 *   folder $S3_STANDIN_DIR (default .data/s3)          keys S3RVER / S3RVER
 */
import { mkdirSync } from "node:fs";
import { join } from "node:path";
import S3rver from "s3rver";

const port = Number(process.env.S3_STANDIN_PORT ?? 4569);
const directory = process.env.S3_STANDIN_DIR ?? join(process.cwd(), ".data", "s3");
const bucket = process.env.S3_BUCKET ?? "dioptra-files";
mkdirSync(directory, { recursive: true });

const server = new S3rver({
  port,
  address: "127.0.0.1",
  directory,
  silent: true,
  configureBuckets: [{ name: bucket, configs: [] }],
});

server.run().then(
  () => console.log(`[s3] object storage stand-in on 127.0.0.1:${port}, bucket ${bucket}, folder ${directory}`),
  (error: unknown) => {
    console.error("[s3] failed to start:", error);
    process.exit(1);
  },
);

const shutdown = () => {
  server.close().finally(() => process.exit(0));
  setTimeout(() => process.exit(0), 500).unref();
};
process.on("SIGTERM", shutdown);
process.on("SIGINT", shutdown);
