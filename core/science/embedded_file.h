// Data files compiled into the library (cmake/embed_files.cmake), so that nothing reads data files
// at run time.
#pragma once

#include <cstddef>
#include <string_view>

namespace planckton::data {

struct EmbeddedFile {
  std::string_view name;   // file name, e.g. "2mass-j.csv"
  std::string_view bytes;  // its contents
};

// core/data/passbands: INDEX.csv and one CSV per band.
extern const EmbeddedFile kPassbandFiles[];
extern const std::size_t kPassbandFilesCount;

}  // namespace planckton::data
