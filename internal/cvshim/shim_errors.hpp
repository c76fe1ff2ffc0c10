// Error reporting shared by the shim's C++ files: every exported C function
// returns NULL on success or an error string allocated with malloc (the Go
// side frees it), and no C++ exception crosses into Go.
#ifndef CRESTSPEED_CVSHIM_ERRORS_HPP
#define CRESTSPEED_CVSHIM_ERRORS_HPP

#include <cstdlib>
#include <cstring>
#include <exception>
#include <string>

#include <opencv2/core.hpp>

namespace cvshim_errors {

inline char *errorString(const std::string &msg) {
	char *s = static_cast<char *>(std::malloc(msg.size() + 1));
	if (s == nullptr) {
		// Out of memory while reporting an error: NULL would read as
		// success, so stop here rather than return garbage.
		std::abort();
	}
	std::memcpy(s, msg.c_str(), msg.size() + 1);
	return s;
}

// fail turns the exception being handled into an error string.
inline char *fail(const char *what_call) {
	try {
		throw;
	} catch (const cv::Exception &e) {
		// e.err is the bare message; e.what() adds file and line noise.
		return errorString(std::string(what_call) + ": " + e.err + " (" + e.func + ")");
	} catch (const std::exception &e) {
		return errorString(std::string(what_call) + ": " + e.what());
	} catch (...) {
		return errorString(std::string(what_call) + ": unknown C++ exception");
	}
}

} // namespace cvshim_errors

#endif
