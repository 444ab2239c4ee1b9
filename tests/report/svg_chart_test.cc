// Tests for the SVG drawing kit: escaping, numbers, axis ticks.
#include <doctest/doctest.h>

#include "coordinator/report/svg_chart.h"

using namespace fanfold;

TEST_CASE("escaping keeps markup out of text and attributes") {
  // Intent: the five XML specials are escaped; control bytes become U+FFFD (not allowed in XML 1.0).
  CHECK(XmlEscape("a<b & \"c\" 'd'>") == "a&lt;b &amp; &quot;c&quot; &#39;d&#39;&gt;");
  CHECK(XmlEscape(std::string("x\x01y")) == "x\xEF\xBF\xBDy");
  CHECK(XmlEscape("Drummet \"Old Quay\"") == "Drummet &quot;Old Quay&quot;");
}

TEST_CASE("coordinates print compactly") {
  // Intent: at most two decimals, no trailing zeros, no "-0", non-finite as 0.
  CHECK(SvgNum(12.5) == "12.5");
  CHECK(SvgNum(3.0) == "3");
  CHECK(SvgNum(0.126) == "0.13");
  CHECK(SvgNum(-0.001) == "0");
  CHECK(SvgNum(1.0 / 0.0) == "0");
}

TEST_CASE("nice ticks are 1, 2 or 5 times a power of ten and cover the range") {
  // Intent: Heckbert's rule (Graphics Gems, 1990): [0, 1] in ~5 ticks → step 0.2; [0, 37] → step 10.
  std::vector<double> t = NiceTicks(0, 1, 5);
  REQUIRE(t.size() == 6);
  CHECK(t[1] == doctest::Approx(0.2));
  CHECK(t.back() == doctest::Approx(1.0));
  t = NiceTicks(0, 37, 5);
  REQUIRE(t.size() == 4);
  CHECK(t[1] == doctest::Approx(10));
  CHECK(NiceTicks(5, 5, 5) == std::vector<double>{5});
  CHECK(NiceCeiling(37) == doctest::Approx(40));
  CHECK(NiceCeiling(0) == 1);
}

TEST_CASE("tick labels") {
  // Intent: short SI forms for large values, plain otherwise.
  CHECK(TickLabel(0) == "0");
  CHECK(TickLabel(0.25) == "0.25");
  CHECK(TickLabel(15000) == "15k");
  CHECK(TickLabel(2'000'000) == "2M");
}

TEST_CASE("an Svg document is well formed") {
  // Intent: role/aria-label for screen readers, titles escaped inside their element.
  Svg s(100, 50, "a <chart>");
  s.Rect(1, 2, 3, 4, "class=\"bar\"", "shard 1 & 2");
  s.Text(5, 6, "x<y");
  const std::string out = s.Finish();
  CHECK(out.rfind("<svg xmlns=\"http://www.w3.org/2000/svg\"", 0) == 0);
  CHECK(out.find("aria-label=\"a &lt;chart&gt;\"") != std::string::npos);
  CHECK(out.find("<title>shard 1 &amp; 2</title></rect>") != std::string::npos);
  CHECK(out.find(">x&lt;y</text>") != std::string::npos);
  CHECK(out.substr(out.size() - 6) == "</svg>");
}

TEST_CASE("spreading labels keeps order and a gap, within bounds when they fit") {
  // Intent: three labels wanting one row get three rows `gap` apart, in their given order, moved as
  // little as possible; labels already apart stay where they want to be; the bottom bound holds.
  std::vector<double> y = SpreadLabels({50, 50, 50}, 15, 0, 200);
  CHECK(y == std::vector<double>{50, 65, 80});
  CHECK(SpreadLabels({10, 100, 40}, 15, 0, 200) == std::vector<double>{10, 100, 40});
  y = SpreadLabels({195, 190, 199}, 15, 0, 200);
  CHECK(y == std::vector<double>{185, 170, 200});
  CHECK(SpreadLabels({}, 15, 0, 200).empty());
}

TEST_CASE("text width estimates count characters, not bytes") {
  // Intent: "×" (two bytes in UTF-8) counts as one character.
  CHECK(TextWidthEstimate("ab", 10) == doctest::Approx(12.4));
  CHECK(TextWidthEstimate("a\xC3\x97", 10) == doctest::Approx(12.4));
}
