# cmake -DINPUT=file -DOUTPUT=file.cpp -DSYMBOL=name -DNAMESPACE=ns -P embed_text.cmake
# Writes a C++ source defining `const std::string_view ns::name` with the file's bytes, so that
# the executable needs no data files at run time.
file(READ "${INPUT}" content HEX)
string(REGEX REPLACE "([0-9a-f][0-9a-f])" "'\\\\x\\1'," content "${content}")
file(WRITE "${OUTPUT}"
  "// Generated from ${INPUT} by cmake/embed_text.cmake; do not edit.\n"
  "#include <string_view>\n"
  "namespace ${NAMESPACE} {\n"
  "namespace { const char kBytes[] = {${content} '\\0'}; }\n"
  "extern const std::string_view ${SYMBOL}(kBytes, sizeof(kBytes) - 1);\n"
  "}\n")
