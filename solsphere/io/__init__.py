"""Reading and writing: file decoding and atomic writes, bench results, shelves, projects."""
