// A small streaming JSON writer for firnray's outputs (we only write JSON, never read it).
// Non-finite numbers are written as null, since JSON has no NaN.
#pragma once

#include <complex>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

namespace firnray {

class JsonWriter {
public:
    explicit JsonWriter(bool pretty = true) : pretty_(pretty) {}

    JsonWriter& begin_object();
    JsonWriter& end_object();
    JsonWriter& begin_array();
    JsonWriter& end_array();
    JsonWriter& key(std::string_view name);

    JsonWriter& value(double v);
    JsonWriter& value(int v);
    JsonWriter& value(long v);
    JsonWriter& value(unsigned long v);
    JsonWriter& value(bool v);
    JsonWriter& value(std::string_view v);
    JsonWriter& value(const char* v) { return value(std::string_view(v)); }
    JsonWriter& value(std::optional<double> v);
    JsonWriter& value(std::complex<double> v);  // as [re, im]
    JsonWriter& null();

    template <class T>
    JsonWriter& field(std::string_view name, const T& v) {
        key(name);
        return value(v);
    }

    const std::string& str() const { return out_; }

private:
    void before_value();
    void newline();
    std::string out_;
    std::vector<bool> first_;  // per open container: no element written yet
    bool after_key_ = false;
    bool pretty_;
};

std::string json_escape(std::string_view text);

}  // namespace firnray
