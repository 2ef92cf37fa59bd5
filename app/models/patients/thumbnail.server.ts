import sharp from "sharp";

/**
 * The thumbnail of an uploaded image: turned upright from its EXIF orientation, fitted inside
 * 320 × 320 px (never enlarged), as a JPEG. Throws when the bytes are not an image sharp can read.
 */
export async function thumbnailOf(bytes: Uint8Array): Promise<Buffer> {
  return sharp(bytes)
    .rotate()
    .resize(320, 320, { fit: "inside", withoutEnlargement: true })
    .jpeg({ quality: 78 })
    .toBuffer();
}
