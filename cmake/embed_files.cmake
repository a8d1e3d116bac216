# cmake -DINPUT_DIR=dir -DFILES="a.csv|b.csv" -DOUTPUT=file.cpp -DSYMBOL=name -DNAMESPACE=ns -P embed_files.cmake
# Writes a C++ source defining `const ns::EmbeddedFile ns::name[]` (file name and bytes of each file,
# in the order given) and `const std::size_t ns::nameCount`, so that the executable needs no data
# files at run time. EmbeddedFile is declared in science/embedded_file.h.
string(REPLACE "|" ";" file_list "${FILES}")
set(arrays "")
set(entries "")
set(index 0)
foreach(name IN LISTS file_list)
  file(READ "${INPUT_DIR}/${name}" content HEX)
  string(REGEX REPLACE "([0-9a-f][0-9a-f])" "'\\\\x\\1'," content "${content}")
  string(APPEND arrays "const char kFile${index}[] = {${content} '\\0'};\n")
  string(APPEND entries "  {\"${name}\", std::string_view(kFile${index}, sizeof(kFile${index}) - 1)},\n")
  math(EXPR index "${index} + 1")
endforeach()
file(WRITE "${OUTPUT}"
  "// Generated from ${INPUT_DIR} by cmake/embed_files.cmake; do not edit.\n"
  "#include \"science/embedded_file.h\"\n"
  "namespace ${NAMESPACE} {\n"
  "namespace {\n${arrays}}\n"
  "extern const EmbeddedFile ${SYMBOL}[] = {\n${entries}};\n"
  "extern const std::size_t ${SYMBOL}Count = ${index};\n"
  "}\n")
