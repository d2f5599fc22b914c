package io.actindex.index.store;

/**
 * A file of the index folder as a manifest records it: name (relative to the folder), length in
 * bytes and the CRC32 its footer carries. Opening checks both against the file.
 */
public record FileRef(String name, long length, int crc) {
  public FileRef {
    if (name == null || name.isEmpty() || name.contains("/") || name.contains("\\") || name.startsWith("."))
      throw new IllegalArgumentException("bad index file name '" + name + "'");
    if (length < 0) throw new IllegalArgumentException("negative length of " + name);
  }
}
