// SPDX-License-Identifier: Apache-2.0
// Core JSON: escapes, number round trips, nested parsing, strict grammar, error text.
#include <gtest/gtest.h>

#include <cmath>
#include <cstdint>
#include <limits>
#include <string>
#include <vector>

#include "recofold/core/error.h"
#include "recofold/core/json.h"

using namespace recofold;

namespace {

// The reason of the InputError parse_json throws for `text` ("" if it parses).
std::string parse_error(const std::string& text) {
  try {
    parse_json(text, "model.h5", "/model@architecture");
  } catch (const InputError& e) {
    EXPECT_EQ(e.file(), "model.h5");
    EXPECT_EQ(e.field(), "/model@architecture");
    return e.reason();
  }
  return "";
}

JsonValue parse(const std::string& text) { return parse_json(text, "t.json", ""); }

}  // namespace

TEST(JsonQuote, EscapesQuoteBackslashAndControlCharacters) {
  EXPECT_EQ(json_quote("plain"), "\"plain\"");
  EXPECT_EQ(json_quote("say \"hi\""), "\"say \\\"hi\\\"\"");
  EXPECT_EQ(json_quote("C:\\dir"), "\"C:\\\\dir\"");
  EXPECT_EQ(json_quote("a\nb\tc\rd\be\ff"), "\"a\\nb\\tc\\rd\\be\\ff\"");
  EXPECT_EQ(json_quote(std::string("\x01\x1f", 2)), "\"\\u0001\\u001f\"");
  EXPECT_EQ(json_quote(std::string("a\0b", 3)), "\"a\\u0000b\"");
  EXPECT_EQ(json_quote("/"), "\"/\"");
}

TEST(JsonQuote, KeepsUtf8AndReplacesInvalidBytes) {
  EXPECT_EQ(json_quote("\xc2\xb5m \xe2\x82\xac \xf0\x9f\x98\x80"), "\"\xc2\xb5m \xe2\x82\xac \xf0\x9f\x98\x80\"");
  // A lone continuation byte, a cut sequence, an overlong '/', an encoded surrogate.
  EXPECT_EQ(json_quote("a\x80z"), "\"a\\ufffdz\"");
  EXPECT_EQ(json_quote("\xe2\x82"), "\"\\ufffd\\ufffd\"");
  EXPECT_EQ(json_quote("\xc0\xaf"), "\"\\ufffd\\ufffd\"");
  EXPECT_EQ(json_quote("\xed\xa0\x80"), "\"\\ufffd\\ufffd\\ufffd\"");
}

TEST(JsonQuote, EveryByteStringReadsBackAfterQuoting) {
  std::string all;
  for (int c = 1; c < 0x80; ++c) all += static_cast<char>(c);
  EXPECT_EQ(parse(json_quote(all)).text, all);
  const std::string utf8 = "\xc3\xa9t\xc3\xa9 \xe6\xb0\xb4 \xf0\x9f\x98\x80";
  EXPECT_EQ(parse(json_quote(utf8)).text, utf8);
}

TEST(JsonNumber, ShortestTextReadsBackToTheSameDouble) {
  EXPECT_EQ(json_number(0.1), "0.1");
  EXPECT_EQ(json_number(4.0), "4");
  EXPECT_EQ(json_number(-2.5e-300), "-2.5e-300");
  EXPECT_EQ(json_number(0.1 + 0.2), "0.30000000000000004");
  const std::vector<double> values = {0.0,
                                      -0.0,
                                      1.0 / 3.0,
                                      M_PI,
                                      1e308,
                                      std::numeric_limits<double>::max(),
                                      std::numeric_limits<double>::min(),
                                      std::numeric_limits<double>::denorm_min(),
                                      123456789.123456789,
                                      -7.0e-5};
  for (double v : values) {
    const std::string t = json_number(v);
    const JsonValue back = parse(t);
    ASSERT_EQ(back.kind, JsonValue::Kind::kNumber) << t;
    EXPECT_EQ(back.number, v) << t;
    EXPECT_EQ(std::signbit(back.number), std::signbit(v)) << t;
  }
}

TEST(JsonNumber, NonFiniteBecomesNull) {
  EXPECT_EQ(json_number(std::nan("")), "null");
  EXPECT_EQ(json_number(INFINITY), "null");
  EXPECT_EQ(json_number(-INFINITY), "null");
  JsonObjectWriter w;
  w.add("psnr", INFINITY);
  w.add("list", std::vector<double>{1.0, std::nan(""), -INFINITY});
  EXPECT_EQ(w.str(), "{\"psnr\": null, \"list\": [1, null, null]}");
  const JsonValue v = parse(w.str());
  EXPECT_EQ(v.find("psnr")->kind, JsonValue::Kind::kNull);
  EXPECT_EQ(v.find("list")->items.at(1).kind, JsonValue::Kind::kNull);
}

TEST(JsonParse, NestedObjectsAndArraysKeepOrderAndTypes) {
  const JsonValue v = parse(
      " {\"b\": {\"inner\": [1, -2.5e3, [true, false, null]], \"s\": \"x\\u00e9\\ud83d\\ude00\"},\n"
      "  \"a\": [], \"c\": {}, \"d\": \"\\\"\\\\\\/\\b\\f\\n\\r\\t\"}\t");
  ASSERT_EQ(v.kind, JsonValue::Kind::kObject);
  ASSERT_EQ(v.members.size(), 4u);
  EXPECT_EQ(v.members[0].first, "b");
  EXPECT_EQ(v.members[1].first, "a");
  const JsonValue* b = v.find("b");
  ASSERT_NE(b, nullptr);
  const JsonValue* inner = b->find("inner");
  ASSERT_NE(inner, nullptr);
  ASSERT_EQ(inner->items.size(), 3u);
  EXPECT_EQ(inner->items[0].number, 1.0);
  EXPECT_EQ(inner->items[1].number, -2500.0);
  ASSERT_EQ(inner->items[2].kind, JsonValue::Kind::kArray);
  EXPECT_TRUE(inner->items[2].items[0].boolean);
  EXPECT_EQ(inner->items[2].items[1].kind, JsonValue::Kind::kBool);
  EXPECT_FALSE(inner->items[2].items[1].boolean);
  EXPECT_EQ(inner->items[2].items[2].kind, JsonValue::Kind::kNull);
  EXPECT_EQ(b->find("s")->text, "x\xc3\xa9\xf0\x9f\x98\x80");
  EXPECT_EQ(v.find("a")->kind, JsonValue::Kind::kArray);
  EXPECT_TRUE(v.find("a")->items.empty());
  EXPECT_EQ(v.find("c")->kind, JsonValue::Kind::kObject);
  EXPECT_EQ(v.find("d")->text, "\"\\/\b\f\n\r\t");
  EXPECT_EQ(v.find("missing"), nullptr);
  EXPECT_EQ(inner->find("x"), nullptr) << "find on an array";
}

TEST(JsonParse, WriteJsonRoundTrips) {
  const std::string text =
      "{\"a\": [1, 0.25, \"q\\\"\"], \"b\": {\"c\": null, \"d\": true}, \"e\": -3e-12, \"f\": \"\\u0001\"}";
  const JsonValue v = parse(text);
  EXPECT_EQ(write_json(v), text);
  EXPECT_EQ(write_json(parse(write_json(v))), text);
}

TEST(JsonParse, MalformedTextNamesFileFieldAndOffset) {
  EXPECT_EQ(parse_error("{\"a\": 1,}"), "not valid JSON: expected a string at character 8");
  EXPECT_EQ(parse_error("{\"a\" 1}"), "not valid JSON: expected ':' at character 5");
  EXPECT_EQ(parse_error("[1, 2"), "not valid JSON: expected ',' or ']' at character 5");
  EXPECT_EQ(parse_error("{\"a\": 1} x"), "not valid JSON: unexpected text after the value at character 9");
  EXPECT_EQ(parse_error(""), "not valid JSON: unexpected end at character 0");
  EXPECT_EQ(parse_error("\"abc"), "not valid JSON: unfinished string at character 4");
  EXPECT_EQ(parse_error("{\"k\": 1, \"k\": 2}"), "not valid JSON: repeated key \"k\" at character 9");
}

TEST(JsonParse, RefusesWhatStrictJsonRefuses) {
  for (const char* bad : {"NaN", "Infinity", "-Infinity", "nan", "inf", "+1", "01", "1.", ".5", "1e", "1e+",
                          "0x10", "-", "tru", "nul", "'a'", "[1,]", "{,}", "\"\\x\"", "\"\\u12\"",
                          "\"\\u12g4\"", "\"\\ud800\"", "\"\\udc00\"", "\"\\ud800\\u0041\"", "1e400",
                          "// c\n1", "\"a\nb\"", "\"tab\there\""}) {
    EXPECT_NE(parse_error(bad).find("not valid JSON: "), std::string::npos) << bad;
  }
  EXPECT_EQ(parse_error("1e400"), "not valid JSON: number 1e400 is beyond the double range at character 0");
  EXPECT_EQ(parse_error("\"a\nb\""), "not valid JSON: control character in a string (escape it) at character 2");
  for (const char* good : {"0", "-0", "0.5", "-1.25E+2", "1e-400", "\"\\u0000\"", " [ ] ", "null"})
    EXPECT_EQ(parse_error(good), "") << good;
}

TEST(JsonParse, DeepNestingIsRefusedNotRecursedInto) {
  const std::string ok = std::string(kJsonMaxDepth, '[') + std::string(kJsonMaxDepth, ']');
  EXPECT_EQ(parse_error(ok), "");
  const std::string deep(100000, '[');
  EXPECT_EQ(parse_error(deep), "not valid JSON: nesting deeper than " + std::to_string(kJsonMaxDepth) +
                                   " at character " + std::to_string(kJsonMaxDepth));
}

TEST(JsonWriter, BuildsNestedObjectsArraysAndExactIntegers) {
  JsonObjectWriter calib;
  calib.add("rows", 24);
  calib.add("cols", static_cast<size_t>(16));
  JsonArrayWriter levels;
  for (int l = 1; l <= 2; ++l) {
    JsonObjectWriter o;
    o.add("level", l);
    o.add("ratio", 0.5 * l);
    levels.add(o);
  }
  JsonObjectWriter w;
  w.add("name", "mask \"A\"");
  w.add("seed", std::numeric_limits<uint64_t>::max());
  w.add("offset", std::vector<long long>{-3, 4});
  w.add("ok", true);
  w.add_null("requested");
  w.add("calibration", calib);
  w.add("levels", levels);
  w.add("names", std::vector<std::string>{"a", "b"});
  EXPECT_EQ(w.str(),
            "{\"name\": \"mask \\\"A\\\"\", \"seed\": 18446744073709551615, \"offset\": [-3, 4], \"ok\": true, "
            "\"requested\": null, \"calibration\": {\"rows\": 24, \"cols\": 16}, "
            "\"levels\": [{\"level\": 1, \"ratio\": 0.5}, {\"level\": 2, \"ratio\": 1}], \"names\": [\"a\", \"b\"]}");
  const JsonValue v = parse(w.str());
  EXPECT_EQ(v.find("calibration")->find("cols")->number, 16.0);
  EXPECT_EQ(v.find("levels")->items.at(1).find("ratio")->number, 1.0);
}

TEST(JsonWriter, LinesFormHasOneMemberPerLineAndParses) {
  JsonObjectWriter w;
  EXPECT_EQ(w.str(), "{}");
  EXPECT_EQ(w.str_lines(), "{}");
  w.add("name", "s");
  w.add("cases_total", 6);
  EXPECT_EQ(w.str_lines(), "{\n  \"name\": \"s\",\n  \"cases_total\": 6\n}");
  EXPECT_EQ(parse(w.str_lines()).find("cases_total")->number, 6.0);
  JsonArrayWriter a;
  EXPECT_EQ(a.str(), "[]");
  a.add("x");
  a.add(2);
  a.add(0.5);
  a.add(false);
  a.add_null();
  a.add(JsonArrayWriter());
  EXPECT_EQ(a.str(), "[\"x\", 2, 0.5, false, null, []]");
  EXPECT_EQ(a.size(), 6u);
}
