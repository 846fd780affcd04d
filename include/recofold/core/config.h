// SPDX-License-Identifier: Apache-2.0
// TOML configuration access with file, line and key in every error.
#pragma once

#include <cstdint>
#include <memory>
#include <optional>
#include <string>
#include <vector>

namespace recofold {

namespace internal {
struct ConfigDocument;  // owns the parsed toml++ document (src/core/config.cc)
}

// A table of a TOML document (the whole file, or a [section]). Copies are cheap
// and share the document. Every accessor that fails throws InputError naming the
// file, the dotted key (e.g. "acquisition.accel") and the line.
//
// Typical use:
//   Config cfg = Config::load("phantoms/qc-disk.toml");
//   cfg.expect_only({"name", "fov_mm", "ellipse", "blob"});   // unknown keys -> error
//   double fov = cfg.get_double_or("fov_mm", 240.0);
//   for (const Config& e : cfg.tables("ellipse")) { ... }
class Config {
 public:
  // Parses a file. Syntax errors become InputError with the line number.
  static Config load(const std::string& path);
  // Parses text; `name` stands in for the file name in messages.
  static Config parse(const std::string& text, const std::string& name);

  const std::string& file() const;
  // Dotted path of this table inside the document ("" for the root).
  const std::string& path() const { return path_; }
  // Line of this table's header (or of key `key` when given); 0 if unknown.
  int line(const std::string& key = "") const;

  bool has(const std::string& key) const;
  std::vector<std::string> keys() const;

  // Typed getters; a missing key or a wrong type is an InputError.
  // Integers are accepted where a double is asked for.
  double get_double(const std::string& key) const;
  int64_t get_int(const std::string& key) const;
  bool get_bool(const std::string& key) const;
  std::string get_string(const std::string& key) const;
  std::vector<double> get_double_list(const std::string& key) const;
  std::vector<int64_t> get_int_list(const std::string& key) const;
  std::vector<std::string> get_string_list(const std::string& key) const;

  double get_double_or(const std::string& key, double fallback) const;
  int64_t get_int_or(const std::string& key, int64_t fallback) const;
  bool get_bool_or(const std::string& key, bool fallback) const;
  std::string get_string_or(const std::string& key, const std::string& fallback) const;

  // Sub-table [key]; InputError if missing or not a table.
  Config table(const std::string& key) const;
  // Array of tables [[key]] (empty if the key is absent).
  std::vector<Config> tables(const std::string& key) const;

  // Throws InputError for the first key not in `allowed`, listing the allowed keys.
  void expect_only(const std::vector<std::string>& allowed) const;

  // Builds the error a caller raises for a bad value of `key` (file, line, dotted key).
  class InputError error(const std::string& key, const std::string& reason) const;

  // Dotted name of a key in this table ("acquisition.accel").
  std::string dotted(const std::string& key) const;

 private:
  Config(std::shared_ptr<const internal::ConfigDocument> doc, const void* table, std::string path);
  const void* node(const std::string& key) const;  // toml::node* or nullptr

  std::shared_ptr<const internal::ConfigDocument> doc_;
  const void* table_ = nullptr;  // const toml::table*
  std::string path_;
};

}  // namespace recofold
