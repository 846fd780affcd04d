// SPDX-License-Identifier: Apache-2.0
// toml++ behind the Config facade; the only translation unit that includes toml++.
#include "recofold/core/config.h"

#include "recofold/core/atomic_file.h"

#include <fstream>
#include <sstream>

#define TOML_EXCEPTIONS 1
#include <toml++/toml.h>

#include "recofold/core/error.h"

namespace recofold {

namespace internal {
struct ConfigDocument {
  std::string file;
  toml::table root;
};
}  // namespace internal

namespace {
const toml::table& as_table(const void* p) { return *static_cast<const toml::table*>(p); }

const char* type_name(const toml::node& n) {
  switch (n.type()) {
    case toml::node_type::table: return "table";
    case toml::node_type::array: return "array";
    case toml::node_type::string: return "string";
    case toml::node_type::integer: return "integer";
    case toml::node_type::floating_point: return "float";
    case toml::node_type::boolean: return "boolean";
    default: return "date/time";
  }
}
}  // namespace

Config::Config(std::shared_ptr<const internal::ConfigDocument> doc, const void* table, std::string path)
    : doc_(std::move(doc)), table_(table), path_(std::move(path)) {}

Config Config::load(const std::string& path) {
  return parse(read_text_file(path), path);
}

Config Config::parse(const std::string& text, const std::string& name) {
  auto doc = std::make_shared<internal::ConfigDocument>();
  doc->file = name;
  try {
    doc->root = toml::parse(text, name);
  } catch (const toml::parse_error& e) {
    throw InputError(name, "", std::string("TOML syntax error: ") + std::string(e.description()),
                     static_cast<int>(e.source().begin.line));
  }
  const void* root = &doc->root;
  return Config(doc, root, "");
}

const std::string& Config::file() const { return doc_->file; }

std::string Config::dotted(const std::string& key) const {
  if (path_.empty()) return key;
  if (key.empty()) return path_;
  return path_ + "." + key;
}

const void* Config::node(const std::string& key) const { return as_table(table_).get(key); }

int Config::line(const std::string& key) const {
  const toml::node* n = key.empty() ? static_cast<const toml::node*>(&as_table(table_))
                                    : static_cast<const toml::node*>(node(key));
  if (!n) n = &as_table(table_);
  return static_cast<int>(n->source().begin.line);
}

InputError Config::error(const std::string& key, const std::string& reason) const {
  return InputError(file(), dotted(key), reason, line(key));
}

bool Config::has(const std::string& key) const { return node(key) != nullptr; }

std::vector<std::string> Config::keys() const {
  std::vector<std::string> out;
  for (auto&& [k, v] : as_table(table_)) out.emplace_back(k.str());
  return out;
}

namespace {
const toml::node& require(const Config& c, const void* p, const std::string& key, const char* want) {
  if (!p) throw c.error(key, std::string("missing required key (expected ") + want + ")");
  return *static_cast<const toml::node*>(p);
}
double to_double(const Config& c, const toml::node& n, const std::string& key) {
  if (auto v = n.value_exact<double>()) return *v;
  if (auto v = n.value_exact<int64_t>()) return static_cast<double>(*v);
  throw InputError(c.file(), c.dotted(key), std::string("expected a number, found ") + type_name(n),
                   static_cast<int>(n.source().begin.line));
}
int64_t to_int(const Config& c, const toml::node& n, const std::string& key) {
  if (auto v = n.value_exact<int64_t>()) return *v;
  throw InputError(c.file(), c.dotted(key), std::string("expected an integer, found ") + type_name(n),
                   static_cast<int>(n.source().begin.line));
}
}  // namespace

double Config::get_double(const std::string& key) const {
  return to_double(*this, require(*this, node(key), key, "a number"), key);
}
int64_t Config::get_int(const std::string& key) const {
  return to_int(*this, require(*this, node(key), key, "an integer"), key);
}
bool Config::get_bool(const std::string& key) const {
  const toml::node& n = require(*this, node(key), key, "true or false");
  if (auto v = n.value_exact<bool>()) return *v;
  throw InputError(file(), dotted(key), std::string("expected true or false, found ") + type_name(n),
                   line(key));
}
std::string Config::get_string(const std::string& key) const {
  const toml::node& n = require(*this, node(key), key, "a string");
  if (auto v = n.value_exact<std::string>()) return *v;
  throw InputError(file(), dotted(key), std::string("expected a string, found ") + type_name(n),
                   line(key));
}

namespace {
const toml::array& require_array(const Config& c, const void* p, const std::string& key) {
  const toml::node& n = require(c, p, key, "an array");
  if (const toml::array* a = n.as_array()) return *a;
  throw InputError(c.file(), c.dotted(key), std::string("expected an array, found ") + type_name(n),
                   c.line(key));
}
}  // namespace

std::vector<double> Config::get_double_list(const std::string& key) const {
  std::vector<double> out;
  const toml::array& a = require_array(*this, node(key), key);
  for (size_t i = 0; i < a.size(); ++i) out.push_back(to_double(*this, a[i], key + "[" + std::to_string(i) + "]"));
  return out;
}
std::vector<int64_t> Config::get_int_list(const std::string& key) const {
  std::vector<int64_t> out;
  const toml::array& a = require_array(*this, node(key), key);
  for (size_t i = 0; i < a.size(); ++i) out.push_back(to_int(*this, a[i], key + "[" + std::to_string(i) + "]"));
  return out;
}
std::vector<std::string> Config::get_string_list(const std::string& key) const {
  std::vector<std::string> out;
  const toml::array& a = require_array(*this, node(key), key);
  for (size_t i = 0; i < a.size(); ++i) {
    auto v = a[i].value_exact<std::string>();
    if (!v)
      throw InputError(file(), dotted(key) + "[" + std::to_string(i) + "]",
                       std::string("expected a string, found ") + type_name(a[i]),
                       static_cast<int>(a[i].source().begin.line));
    out.push_back(*v);
  }
  return out;
}

double Config::get_double_or(const std::string& key, double fallback) const {
  return has(key) ? get_double(key) : fallback;
}
int64_t Config::get_int_or(const std::string& key, int64_t fallback) const {
  return has(key) ? get_int(key) : fallback;
}
bool Config::get_bool_or(const std::string& key, bool fallback) const {
  return has(key) ? get_bool(key) : fallback;
}
std::string Config::get_string_or(const std::string& key, const std::string& fallback) const {
  return has(key) ? get_string(key) : fallback;
}

Config Config::table(const std::string& key) const {
  const toml::node& n = require(*this, node(key), key, "a table");
  if (const toml::table* t = n.as_table()) return Config(doc_, t, dotted(key));
  throw InputError(file(), dotted(key), std::string("expected a table, found ") + type_name(n), line(key));
}

std::vector<Config> Config::tables(const std::string& key) const {
  std::vector<Config> out;
  const void* p = node(key);
  if (!p) return out;
  const toml::node& n = *static_cast<const toml::node*>(p);
  if (const toml::table* t = n.as_table()) {
    out.push_back(Config(doc_, t, dotted(key)));
    return out;
  }
  const toml::array* a = n.as_array();
  if (!a || !a->is_array_of_tables())
    throw InputError(file(), dotted(key), std::string("expected [[") + key + "]] tables, found " + type_name(n),
                     line(key));
  for (size_t i = 0; i < a->size(); ++i)
    out.push_back(Config(doc_, (*a)[i].as_table(), dotted(key) + "[" + std::to_string(i) + "]"));
  return out;
}

void Config::expect_only(const std::vector<std::string>& allowed) const {
  for (auto&& [k, v] : as_table(table_)) {
    const std::string key(k.str());
    bool ok = false;
    for (const auto& a : allowed) ok = ok || a == key;
    if (!ok) {
      std::string list;
      for (const auto& a : allowed) list += (list.empty() ? "" : ", ") + a;
      throw InputError(file(), dotted(key), "unknown key (allowed here: " + list + ")",
                       static_cast<int>(v.source().begin.line));
    }
  }
}

}  // namespace recofold
