// Helpers shared by the writers of the output layer: a buffer that is sent to a std::ostream in
// pieces (so that a large table never has to be held whole), and the thin wrappers that render
// a writer into a std::string.
#pragma once

#include <cstddef>
#include <ostream>
#include <sstream>
#include <string>
#include <string_view>

#include <fmt/format.h>

namespace firnray::output {

// Text is formatted into buffer() and sent on by end_row() once a block of it has gathered;
// finish() sends the rest. Without finish() (an exception on the way) the rest is dropped.
class TextSink {
public:
    explicit TextSink(std::ostream& out) : out_(out) {}
    fmt::memory_buffer& buffer() { return buffer_; }
    void put(std::string_view text) { buffer_.append(text.data(), text.data() + text.size()); }
    void put(char c) { buffer_.push_back(c); }
    void end_row() {
        buffer_.push_back('\n');
        if (buffer_.size() >= block_size) send();
    }
    void finish() { send(); }

private:
    static constexpr std::size_t block_size = std::size_t{1} << 16;
    void send() {
        out_.write(buffer_.data(), static_cast<std::streamsize>(buffer_.size()));
        buffer_.clear();
    }
    std::ostream& out_;
    fmt::memory_buffer buffer_;
};

// The text a stream writer produces, as one string (for the std::string-returning wrappers).
template <class Write>
std::string render_to_string(Write&& write) {
    std::ostringstream text;
    write(text);
    return std::move(text).str();
}

}  // namespace firnray::output
